"""The continuous relaxation spectrum H(τ): Maxwell kernels, the regularized solver, the strength rules, ``invert``.

Pure functions over numpy arrays and the :class:`~tauspec.spectrum.invert.Spectrum` result; no files, no printing,
no figures.  May import :mod:`tauspec.data` and :mod:`tauspec.errors` only.
"""
