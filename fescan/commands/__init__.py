"""Subcommands of the ``fescan`` command line, one module each.

Each module defines ``NAME`` (the subcommand), ``HELP`` (one line),
``add_arguments(parser)`` and ``run(args) -> int``. :mod:`fescan.cli` lists
them in :data:`COMMAND_MODULES`.
"""

from __future__ import annotations

#: Subcommand modules in the order ``fescan --help`` lists them.
COMMAND_MODULES = ("scan", "survey", "report", "compare")
