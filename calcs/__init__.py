"""freerun calculation package: calculation modules and report machinery."""

__version__ = "0.1.0"
