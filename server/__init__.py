"""liftmatch: choose drone power systems (pack × ESC × motor × propeller) from a team's own parts."""

__version__ = "0.1.0"
