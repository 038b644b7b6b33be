"""contactplan: ground contact and downlink planner for libration-point missions.

The engine (ephemeris, geometry, link, plan, io) is pure Python and numpy;
``contactplan.app`` is the only package that imports Qt.
"""

__version__ = "0.1.0"

CAUTION = (
    "Planning aid only: confirm every plan against flight-dynamics products, "
    "station schedules and the mission's own rules before use."
)
