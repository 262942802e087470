"""wetcycle: salts and brines at the surface of present-day Mars and cold, dry analog sites."""

__version__ = "0.1.0"
