"""Child process of tests/test_hostile_inputs.py: scan every case of a manifest, one JSON line each.

Run as ``python -m tests.hostile_runner MANIFEST`` with a memory cap set by the parent
(``RLIMIT_AS``). Each line: ``id``, ``outcome`` (``ok`` / ``error`` / ``unexpected``),
``error_class``, ``message``, ``notes``, ``text`` (the terminal rendering of an ok
result) and ``seconds``.
"""

from __future__ import annotations

import json
import sys
import time
import traceback


def main(manifest: str) -> None:
    """Scan each case and print one JSON line per case, flushing as it goes."""
    from fescan.analysis.scan import scan
    from fescan.core.errors import FescanError
    from fescan.report.text import render_text

    with open(manifest, encoding="utf-8") as fh:
        cases = json.load(fh)
    for case in cases:
        t0 = time.monotonic()
        out = {"id": case["id"], "outcome": "ok", "error_class": None, "message": None, "notes": [], "text": ""}
        try:
            res = scan(case["path"], **case.get("options", {}))
            out["notes"] = list(res.info.notes)
            out["text"] = render_text(res)
        except FescanError as exc:
            out.update(outcome="error", error_class=type(exc).__name__, message=str(exc))
        except BaseException as exc:  # noqa: BLE001 - what the test must never see
            out.update(outcome="unexpected", error_class=type(exc).__name__,
                       message="".join(traceback.format_exception(exc))[-2000:])
        out["seconds"] = time.monotonic() - t0
        sys.stdout.write(json.dumps(out) + "\n")
        sys.stdout.flush()


if __name__ == "__main__":
    main(sys.argv[1])
