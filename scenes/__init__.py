"""Bundled demo scenes, shipped with roofbeat. Every scenario and number in them is invented."""
