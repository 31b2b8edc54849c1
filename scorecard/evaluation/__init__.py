"""Evaluation on counts: score histograms and gains, stability, fairness, comparison of samples."""
