"""Fleet plans: several vehicles, loads and refills, shift limits, priorities, service days.

Front door: :func:`plan_fleet` (:mod:`core.fleet.planner`); settings in
:mod:`core.fleet.settings`; results in :mod:`core.fleet.result`; the independent
feasibility check in :mod:`core.fleet.check`; depot comparison in
:mod:`core.fleet.compare`.
"""

from core.fleet.check import CheckReport, check_plan
from core.fleet.planner import plan_fleet
from core.fleet.result import FleetPlan, Route, Trip
from core.fleet.settings import FleetSettings, VehicleType, settings_from_network

__all__ = [
    "CheckReport",
    "FleetPlan",
    "FleetSettings",
    "Route",
    "Trip",
    "VehicleType",
    "check_plan",
    "plan_fleet",
    "settings_from_network",
]
