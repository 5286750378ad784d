"""linewatch: a line-side monitor for measurement logs (control charts, run rules, alarms)."""

__version__ = "0.1.0"
