"""carbfleet's computing package: air state, fuel, metering law, jetting plan and reports.

Imports run one way: ``cli -> report -> plan -> (config, history) -> physics -> constants``,
where the physics modules are :mod:`tuning.air`, :mod:`tuning.fuel`, :mod:`tuning.metering` and
:mod:`tuning.circuits`.
"""

__version__ = "0.2.0"
