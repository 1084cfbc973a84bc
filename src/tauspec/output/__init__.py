"""What a user reads: CSV tables and JSON of results, figures (matplotlib), the HTML report of a batch.

The only layer that draws.  May import every layer below it (analysis, modes, models, spectrum, data), never
:mod:`tauspec.batch` or :mod:`tauspec.cli`.
"""
