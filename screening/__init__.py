"""heatscreen: loss-of-cooling and runaway screening for vessels.

Screening estimates only: not a design or relief-sizing calculation. Results
defer to applicable codes, test data and review by a licensed or otherwise
qualified professional.
"""
__version__ = "0.1.0"
