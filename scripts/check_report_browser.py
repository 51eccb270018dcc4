"""Open a comparison report in a real headless browser and check it: the page loads, every image
resolves (decoded, non-zero size), and no console error or uncaught script error appears.

Usage::

    python scripts/check_report_browser.py reorder-demo/report.html [--browser chromium]

The browser runs a copy of the page with a small probe script placed first in its ``<head>``: it
records ``console.error`` calls and uncaught errors, and after the ``load`` event writes what it
found into the page, which the browser prints with ``--dump-dom``. Console messages the browser
logs itself (``--enable-logging=stderr``) are checked as well. Exit code 0 when all is well, 1 when
a check fails, 2 when no browser is found.
"""

from __future__ import annotations

import argparse
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

BROWSERS = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable", "chrome")

PROBE = """<script>
(function () {
  var errors = [];
  var origError = console.error;
  console.error = function () { errors.push(Array.prototype.join.call(arguments, " ")); origError.apply(console, arguments); };
  window.addEventListener("error", function (ev) {
    if (ev.target && ev.target !== window && ev.target.tagName) { errors.push("resource failed: " + (ev.target.src || ev.target.href)); }
    else { errors.push("uncaught: " + ev.message); }
  }, true);
  window.addEventListener("load", function () {
    var imgs = Array.prototype.slice.call(document.images);
    var bad = imgs.filter(function (im) { return !(im.complete && im.naturalWidth > 0 && im.naturalHeight > 0); })
                  .map(function (im) { return im.alt || im.src.slice(0, 60); });
    var out = document.createElement("pre");
    out.id = "reorder-browser-check";
    out.textContent = JSON.stringify({loaded: true, images: imgs.length, broken: bad, errors: errors,
                                      title: document.title});
    document.body.appendChild(out);
  });
})();
</script>"""


def find_browser(name: str | None = None) -> str | None:
    """Path of a Chromium-family browser (``name`` first), or None."""
    for cand in ([name] if name else []) + list(BROWSERS):
        path = shutil.which(cand) if cand else None
        if path:
            return path
    return None


def check(report: Path, browser: str, timeout: float = 120.0) -> dict:
    """Load ``report`` in ``browser`` (headless) and return ``{"ok", "images", "broken", "errors", ...}``."""
    page = Path(report).read_text(encoding="utf-8")
    probed = re.sub(r"(<head[^>]*>)", lambda m: m.group(1) + PROBE, page, count=1, flags=re.I)
    if probed == page:
        probed = PROBE + page
    with tempfile.TemporaryDirectory() as tmp:
        # beside the original, so that relative links resolve as they do for the real page
        copy = Path(report).resolve().parent / f".browser-check-{os.getpid()}.html"
        copy.write_text(probed, encoding="utf-8")
        try:
            cmd = [browser, "--headless", "--disable-gpu", "--no-sandbox", "--no-first-run",
                   f"--user-data-dir={tmp}", "--enable-logging=stderr", "--v=0",
                   "--virtual-time-budget=10000", "--dump-dom", copy.as_uri()]
            r = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
        finally:
            copy.unlink(missing_ok=True)
    m = re.search(r'<pre id="reorder-browser-check">(.*?)</pre>', r.stdout, flags=re.S)
    if not m:
        return {"ok": False, "loaded": False, "errors": [f"page did not finish loading (exit {r.returncode})"],
                "stderr": r.stderr[-2000:]}
    import html as _html

    found = json.loads(_html.unescape(m.group(1)))
    console = [line for line in r.stderr.splitlines() if "CONSOLE" in line and ("ERROR" in line or "Uncaught" in line)]
    found["errors"] = found.get("errors", []) + console
    found["ok"] = bool(found.get("loaded")) and not found.get("broken") and not found["errors"]
    return found


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("report", type=Path, help="report.html written by reorder compare or reorder demo")
    ap.add_argument("--browser", help="browser executable (default: the first of %s found)" % ", ".join(BROWSERS))
    args = ap.parse_args(argv)
    if not args.report.is_file():
        print(f"check_report_browser: no such file: {args.report}", file=sys.stderr)
        return 2
    browser = find_browser(args.browser)
    if browser is None:
        print("check_report_browser: no headless browser found (on Debian: apt-get install chromium)", file=sys.stderr)
        return 2
    res = check(args.report, browser)
    print(json.dumps(res, indent=1))
    return 0 if res["ok"] else 1


if __name__ == "__main__":
    sys.exit(main())
