"""schemcheck: DC error budgets of op-amp stages, read from KiCad schematics."""

__version__ = "0.1.0"
