"""The data layer: one frequency sweep in SI units, and the files it comes from and results go to.

:class:`~tauspec.data.sweep.Sweep` (validated SI arrays), unit conversion (:mod:`~tauspec.data.units`), reading
sweep files (:mod:`~tauspec.data.read`, one helper module per step: source, encodings, dialect, blocks, meta,
columns, plan, cells, table, temperature, build) and writing tables and JSON (:mod:`~tauspec.data.write`).  This
layer imports nothing of tauspec but :mod:`tauspec.errors`; every other layer may import it.
"""
