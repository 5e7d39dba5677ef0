"""Air density and named wind scales against their published sources."""

import math

import numpy as np
import pytest
from fluids.atmosphere import ATMOSPHERE_1976

from physics import air
from physics.scene import Gust
from physics.wind_scales import beaufort, pedestrian_threshold, saffir_simpson


@pytest.mark.parametrize("altitude, rho", [(0.0, 1.2250), (1000.0, 1.11166), (2000.0, 1.00655)])
def test_isa_density_table(altitude, rho):
    # US Standard Atmosphere 1976 table values.
    assert air.density(altitude) == pytest.approx(rho, abs=5e-5)


@pytest.mark.parametrize("altitude", [0.0, 250.0, 1000.0, 2500.0, 4000.0])
def test_isa_against_fluids_library(altitude):
    # Cross-check with fluids.atmosphere.ATMOSPHERE_1976 (a reference library).
    ref = ATMOSPHERE_1976(altitude)
    assert air.isa_temperature(altitude) == pytest.approx(ref.T, rel=1e-6)
    assert air.isa_pressure(altitude) == pytest.approx(ref.P, rel=2e-5)
    assert air.density(altitude) == pytest.approx(ref.rho, rel=5e-5)


@pytest.mark.parametrize("celsius, rho", [(0.0, 1.2923), (20.0, 1.2041), (30.0, 1.1644)])
def test_ideal_gas_density_at_sea_level_pressure(celsius, rho):
    # Ideal gas, R = 287.053 J/(kg K), p = 101325 Pa.
    assert air.density(0.0, celsius + 273.15) == pytest.approx(rho, abs=1e-4)


def test_one_minus_cosine_gust_shape():
    # 1-cosine gust (14 CFR 25.341 shape): zero at the ends, the peak at mid-duration.
    t = np.linspace(0, 10, 1001)
    ux, uy = air.gust_profile(t, [Gust(start=2.0, duration=4.0, peak=8.0, from_direction=0.0)])
    assert ux[t.searchsorted(4.0)] == pytest.approx(-8.0)
    assert ux[t < 2.0] == pytest.approx(0.0)
    assert ux[t > 6.0] == pytest.approx(0.0)
    assert ux[t.searchsorted(3.0)] == pytest.approx(-4.0, abs=1e-9)
    assert np.all(uy == 0.0)


def test_wind_direction_convention():
    assert air.wind_vector(10.0, 0.0) == pytest.approx((-10.0, 0.0))          # headwind
    assert air.wind_vector(10.0, math.pi) == pytest.approx((10.0, 0.0))       # tailwind
    assert air.wind_vector(10.0, math.pi / 2) == pytest.approx((0.0, -10.0))  # from the left


@pytest.mark.parametrize("speed, force", [
    (0.1, 0), (0.3, 1), (1.5, 1), (1.6, 2), (3.3, 2), (3.4, 3), (5.4, 3), (5.5, 4), (7.9, 4), (8.0, 5),
    (10.7, 5), (10.8, 6), (13.8, 6), (13.9, 7), (17.1, 7), (17.2, 8), (20.7, 8), (20.8, 9), (24.4, 9),
    (24.5, 10), (28.4, 10), (28.5, 11), (32.6, 11), (32.7, 12), (60.0, 12),
])
def test_beaufort_bands(speed, force):
    # WMO Beaufort scale band edges in m/s (secondary copy of the WMO table).
    assert beaufort(speed) == force


@pytest.mark.parametrize("mph, category", [(73, None), (74, 1), (95, 1), (96, 2), (110, 2), (111, 3),
                                           (129, 3), (130, 4), (156, 4), (157, 5)])
def test_saffir_simpson(mph, category):
    # US National Hurricane Center categories in mph.
    assert saffir_simpson(mph * 0.44704) == category


def test_trade_facts_on_wind_scales():
    # Common practice, no source: 145 km/h of apparent wind is Saffir-Simpson
    # category 1; 320 km/h is category 5; 40 km/h is Beaufort 6; 80 km/h is 9.
    assert saffir_simpson(145 / 3.6) == 1
    assert saffir_simpson(320 / 3.6) == 5
    assert beaufort(40 / 3.6) == 6
    assert beaufort(80 / 3.6) == 9


def test_pedestrian_thresholds():
    # Lawson 1990 (15 and 20 m/s) and Penwarden 1973 (> 20 m/s dangerous).
    assert pedestrian_threshold(14.9) is None
    assert "frail" in pedestrian_threshold(15.0)[1]
    assert "unbalance" in pedestrian_threshold(20.5)[1]
