"""Subcommands of the ``viscometry`` command line, one module each (see :mod:`viscometry.cli`)."""
