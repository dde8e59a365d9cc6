"""Railwright: co-design of a valve amplifier's power transformer and high-voltage supply."""

__version__ = "0.1.0"
