"""heatlog: probe calibration, thermogram reduction and solution-calorimetry energetics.

The board-side logger lives in ``firmware/``; this package is the host side.
"""

__version__ = "0.1.0"
