"""Binning: fine classes on a grid of round cuts, then the exact optimal monotone merge."""
