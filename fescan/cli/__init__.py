"""The ``fescan`` command line: a thin layer over the API, one module per subcommand."""

from fescan.cli.main import build_parser, main

__all__ = ["main", "build_parser"]
