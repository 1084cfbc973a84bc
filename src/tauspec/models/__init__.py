"""Physical models fitted to sweeps: bead-spring chains (Rouse, Zimm), rheological signatures, shift-factor laws.

Pure numerical code.  May import :mod:`tauspec.spectrum` (the Maxwell kernels) and :mod:`tauspec.data`;
independent of :mod:`tauspec.modes`.
"""
