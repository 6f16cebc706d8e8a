"""steelyard: a terminal ledger for vehicle weight and mass properties."""
__version__ = "0.1.0"
