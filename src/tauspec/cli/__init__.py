"""The ``tauspec`` command line: a thin :func:`~tauspec.cli.main.main` and one module per subcommand.

The top layer: it may import every other layer and nothing imports it.
"""
