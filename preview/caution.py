"""The caution every screen, export and brief carries."""

CAUTION = (
    "Planning aid on simplified physics, not a safety certificate. Stunts must be planned, rehearsed and "
    "supervised by a qualified stunt coordinator under local law, the vehicle or rail operator's rules and "
    "the production's safety guidelines. Overhead electrified lines must be made safe by their operator, "
    "whatever this tool says."
)

CAUTION_SHORT = (
    "Planning aid on simplified physics - not a safety certificate. Defer to a qualified stunt coordinator, "
    "local law, the operator's rules and production safety guidelines. Overhead lines: the operator makes them safe."
)
