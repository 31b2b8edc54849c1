"""Data: reading application files, coding the outcome, drawing the samples, coding values."""
