"""Tolerance spread: Monte Carlo trials, yield, worst case and magnitude envelopes."""
