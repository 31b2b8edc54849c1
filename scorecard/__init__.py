"""Credit-style scorecards from a YAML config.

The importable core behind the ``scorecard`` command: bin characteristics into monotone
weight-of-evidence classes, rank them by information value, fit a logistic regression on the
coded data and scale it to integer points.
"""

__version__ = "0.1.0"
