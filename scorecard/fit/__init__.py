"""Fitting: the design held as bin codes, the logistic fit on counts, characteristic selection."""
