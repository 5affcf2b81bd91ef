"""Evaluation: scoring (spec section 3), folds, bootstrap intervals, significance tests, error analysis.

Every function here is pure and silent: it takes records or counts and returns
data. Metrics that are undefined (no gold, no predictions) come back as 0.0
*and* are listed in the result's ``undefined`` warnings, never hidden.
"""
