"""Subcommands of the ``tauspec`` command line, one module each (see :mod:`tauspec.cli`)."""
