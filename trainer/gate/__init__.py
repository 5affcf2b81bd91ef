"""The CI gate: compare a fresh evaluation report with a committed baseline."""
