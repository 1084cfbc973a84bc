"""Comparing spectra between samples: time and modulus shifts, the shape test, series scaling."""
