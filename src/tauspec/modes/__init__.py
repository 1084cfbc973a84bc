"""Discrete Maxwell modes fitted to a sweep, and the numbers derived from a spectrum or modes (η0, J_e⁰, G(t), J(t)).

Pure numerical code (no files, no printing, no figures).  May import :mod:`tauspec.spectrum` and :mod:`tauspec.data`;
independent of :mod:`tauspec.models` (the import-linter contract keeps the two apart).
"""
