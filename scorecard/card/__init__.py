"""The scorecard object (bins, WoE, coefficients, points, scaling) and how it scores rows."""
