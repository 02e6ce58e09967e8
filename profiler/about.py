"""What the package is: its version and the planning-aid caution every report, sheet and README carries."""

__version__ = "0.1.0"

CAUTION = ("Planning aid only: verify on site; local codes, permits, RF-exposure rules "
           "and licensed professionals prevail.")
