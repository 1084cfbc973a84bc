"""Analyses built on spectra, modes and models: the diagnosis, uncertainty, comparison between samples, superposition.

Each subpackage takes results of the layers below and returns a frozen result object; nothing here writes files,
prints or draws.  May import :mod:`tauspec.modes`, :mod:`tauspec.models`, :mod:`tauspec.spectrum`, :mod:`tauspec.data`.
"""
