"""thinfilm: thermal fluctuations of magnetic order in 2D films and monolayers."""

__version__ = "0.1.0"
