"""Command line ``fescan``: a thin layer over the API (one module per subcommand)."""

from __future__ import annotations

import argparse
import importlib
import importlib.util
import logging
import re
import sys
from collections.abc import Sequence
from types import ModuleType

from fescan.cli.common import add_verbose, local_file_hint, option_words
from fescan.core.errors import ConfigError, FescanError
from fescan.core.version import __version__

__all__ = ["main", "build_parser"]

#: Subcommand modules (``fescan.cli.cmd_<name>``) in the order ``fescan --help`` lists them.
#: Each defines ``NAME``, ``HELP``, ``add_arguments(parser)`` and ``run(args) -> int``.
COMMAND_MODULES = ("scan", "survey", "report", "compare")

_CONTROL = re.compile(r"[\x00-\x08\x0a-\x1f\x7f-\x9f]")  # newline too: an error is one line


def _commands() -> list[ModuleType]:
    mods = []
    for name in COMMAND_MODULES:
        full = f"fescan.cli.cmd_{name}"
        if importlib.util.find_spec(full) is not None:
            mods.append(importlib.import_module(full))
    return mods


def build_parser() -> tuple[argparse.ArgumentParser, dict[str, ModuleType]]:
    """The argument parser of ``fescan`` and its subcommand modules by name."""
    p = argparse.ArgumentParser(
        prog="fescan",
        description="Find redox cofactors in protein structures, check Fe-S cluster ligation, and estimate "
                    "electron-transfer wires (Moser-Dutton estimates, not measurements).",
    )
    p.add_argument("--version", action="version", version=f"fescan {__version__}")
    p.add_argument("-v", "--verbose", action="store_true", help="log progress to stderr")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    mods = {}
    for mod in _commands():
        sp = sub.add_parser(mod.NAME, help=mod.HELP, description=mod.HELP)
        mod.add_arguments(sp)
        add_verbose(sp)
        mods[mod.NAME] = mod
    return p, mods


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status (0 ok, 1 bad input, 2 usage)."""
    parser, mods = build_parser()
    a = parser.parse_args(argv)
    logging.basicConfig(level=logging.INFO if a.verbose else logging.WARNING, stream=sys.stderr,
                        format="fescan: %(message)s")
    if a.command is None:
        parser.print_help(sys.stderr)
        return 2
    try:
        return int(mods[a.command].run(a) or 0)
    except ConfigError as exc:  # an option's value: name it as the command line does
        sys.stderr.write("fescan: error: " + _CONTROL.sub("?", option_words(str(exc))) + "\n")
        return 1
    except FescanError as exc:  # one line, without terminal control characters from a file or path name
        sys.stderr.write("fescan: error: " + _CONTROL.sub("?", local_file_hint(str(exc))) + "\n")
        return 1
    except BrokenPipeError:  # output piped into head and closed
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
