"""Open an HTML page in a real headless browser (Chromium) and measure its layout.

Used by the report tests: the page is copied with a small script appended that
writes the measurements into the DOM, and Chromium's ``--dump-dom`` prints the
DOM after the page has loaded. Tests skip with a reason when Chromium is absent.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

import pytest

__all__ = ["chromium", "requires_chromium", "measure_page"]

_PROBE = """
<script>
(function () {
  var d = document.documentElement;
  var wide = [];
  document.querySelectorAll('body *').forEach(function (el) {
    var r = el.getBoundingClientRect();
    if (r.right > window.innerWidth + 1) {
      var box = el.closest('.scroll');
      if (!box) { wide.push(el.tagName.toLowerCase() + (el.id ? '#' + el.id : '')); }
    }
  });
  var out = {scrollWidth: d.scrollWidth, scrollHeight: d.scrollHeight, innerWidth: window.innerWidth,
             sections: Array.prototype.map.call(document.querySelectorAll('h2[id]'), function (h) { return h.id; }),
             outside: wide.slice(0, 20)};
  var pre = document.createElement('pre');
  pre.id = 'fescan-measure';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>
"""


def chromium() -> str | None:
    """Path of a Chromium executable, or None."""
    for name in ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable"):
        path = shutil.which(name)
        if path:
            return path
    return None


requires_chromium = pytest.mark.skipif(
    chromium() is None, reason="Chromium not installed (Debian: apt-get install -y chromium)")


def measure_page(html_path: str | Path, *, width: int = 1400, height: int = 900, timeout: float = 120.0) -> dict:
    """Load a page at a window size and return its measurements.

    Returns
    -------
    dict
        ``scrollWidth``, ``scrollHeight``, ``innerWidth`` (CSS px), ``sections``
        (ids of the ``h2`` headings) and ``outside`` (elements reaching past the
        window's right edge outside a ``.scroll`` box).
    """
    exe = chromium()
    if exe is None:
        pytest.skip("Chromium not installed")
    src = Path(html_path)
    text = src.read_text(encoding="utf-8")
    probed = text.replace("</body>", _PROBE + "</body>", 1)
    with tempfile.TemporaryDirectory() as tmp:
        page = Path(src.parent) / (".probe-" + src.name)
        page.write_text(probed, encoding="utf-8")
        try:
            proc = subprocess.run(
                [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--no-first-run", "--disable-dev-shm-usage", f"--user-data-dir={tmp}",
                 f"--window-size={width},{height}", "--dump-dom", page.resolve().as_uri()],
                capture_output=True, text=True, timeout=timeout, check=False)
        finally:
            page.unlink(missing_ok=True)
    m = re.search(r'<pre id="fescan-measure">(.*?)</pre>', proc.stdout, re.S)
    if m is None:
        pytest.fail(f"Chromium gave no measurement (exit {proc.returncode}): {proc.stderr[-500:]}")
    import html

    return json.loads(html.unescape(m.group(1)))
