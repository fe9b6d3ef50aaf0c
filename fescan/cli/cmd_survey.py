"""``fescan survey INPUT... -o OUT``: many structures in parallel, into one set of tables."""

from __future__ import annotations

import argparse
import json
import sys

from fescan.cli.common import add_wire_options, wire_options

__all__ = ["NAME", "HELP", "add_arguments", "run"]

NAME = "survey"
HELP = "many structures (files, folders, globs): parallel, resumable, one table per kind"


def _positive(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"not a number: {text!r}") from None
    if v < 0:
        raise argparse.ArgumentTypeError(f"must not be negative: {text!r}")
    return v


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Arguments of ``fescan survey``."""
    p.add_argument("inputs", nargs="*", metavar="INPUT",
                   help="structure files, folders (searched recursively) or glob patterns")
    p.add_argument("--file-list", metavar="FILE",
                   help="also read structure paths from FILE, one per line (relative paths: from FILE's folder)")
    p.add_argument("--no-prefilter", action="store_true",
                   help="parse every file (by default files whose bytes name no redox metal and no cofactor "
                        "code are recorded as 'no redox candidate' without parsing)")
    p.add_argument("-o", "--out", required=True, metavar="OUT",
                   help="output folder for the tables; rerun into it to resume")
    p.add_argument("--workers", type=int, metavar="N", help="worker processes (default: all cores)")
    p.add_argument("--time-limit", type=_positive, default=300.0, metavar="S",
                   help="seconds one file may take before its worker is stopped (default 300; 0: no limit)")
    p.add_argument("--memory-limit", type=_positive, default=4.0, metavar="GB",
                   help="memory cap of each worker in GiB (address space; default 4; 0: no cap)")
    p.add_argument("--format", choices=("parquet", "csv"), default="parquet",
                   help="format of the merged tables (default parquet)")
    p.add_argument("--retry-failed", action="store_true", help="analyse again the files that failed before")
    p.add_argument("--quiet", action="store_true", help="no progress bar and no summary")
    p.add_argument("--engine", choices=("processes", "dask"), default="processes",
                   help="local worker processes (default) or Dask distributed (pip install 'fescan[dask]')")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="Dask scheduler address (default: start a local cluster on 127.0.0.1)")
    p.add_argument("--report", action="store_true",
                   help="also write a report per structure and one for the survey")
    p.add_argument("--summary-json", metavar="FILE", help="also write the summary as JSON to FILE")
    add_wire_options(p, endpoints=False)


def run(a: argparse.Namespace) -> int:
    """Run ``fescan survey``; exit status 0 when some files succeeded (failures are in their table), 1 when all failed."""
    from fescan.api import survey
    from fescan.core.errors import ConfigError

    if a.workers is not None and a.workers < 1:
        raise ConfigError(f"--workers must be at least 1, got {a.workers}")
    if a.scheduler and a.engine != "dask":
        raise ConfigError("--scheduler needs --engine dask")
    inputs = list(a.inputs)
    if a.file_list:
        from fescan.surveys.run import read_file_list

        inputs += read_file_list(a.file_list)
    if not inputs:
        raise ConfigError("give structure files, folders or patterns, or --file-list FILE")
    try:
        summary = survey(inputs, a.out, workers=a.workers, time_limit=a.time_limit or None,
                         memory_limit=a.memory_limit or None, table_format=a.format, quiet=a.quiet,
                         retry_failed=a.retry_failed, engine=a.engine, scheduler=a.scheduler,
                         report=a.report, prefilter=not a.no_prefilter, **wire_options(a))
    except KeyboardInterrupt:
        sys.stderr.write(f"fescan: interrupted; finished files are saved in {a.out}: "
                         "run the same command again to resume\n")
        return 130
    if a.summary_json:
        with open(a.summary_json, "w", encoding="utf-8") as fh:
            json.dump(summary.to_dict(), fh, indent=1)
            fh.write("\n")
    if not a.quiet:
        from fescan.report.text import strip_controls

        sys.stdout.write(strip_controls(summary.to_text()) + "\n")
    if summary.structures_failed and not summary.structures_ok:
        sys.stderr.write(f"fescan: error: every one of the {summary.structures_failed} file(s) in {a.out} failed "
                         f"(see {a.out}/failures.{a.format})\n")
        return 1
    return 0
