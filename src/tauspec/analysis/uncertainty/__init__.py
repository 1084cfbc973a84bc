"""Confidence bands on H(τ) and intervals on reported numbers, by resampling the sweep."""
