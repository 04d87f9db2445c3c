"""Time of one re-check in the browser's mirror (static/js/bearing/), in Debian's chromium,
unthrottled and with the CPU throttled as a phone-class device would be.

    .venv/bin/python benchmarks/mirror_speed.py [--repeat 500] [--rates 1,4]

Runs every ``check`` case of the shared vectors (tests/vectors/bearing-vectors.json)
through ``checkBearing`` inside the page, each case ``--repeat`` times in a row after one
warm-up pass (the page's clock is coarse, about 0.1 ms, so each case is timed over
all its calls together), and prints per call: the median over the cases, the 95th percentile and the
slowest. Also the module import and the very first call of a fresh page (the JIT has not
warmed up yet: what the first keystroke after opening a form costs). Timed in the page,
so no Playwright round trip is counted. The issue's target: a verdict within 50 ms of a
keystroke at 4x throttle. Figures are for this machine only.
"""

from __future__ import annotations

import argparse
import functools
import json
import shutil
import statistics
import sys
import threading
from http.server import SimpleHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path

from playwright.sync_api import sync_playwright

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))  # devtools/ is not installed
sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))  # kit/

from devtools.vectors import DEFAULT_PATH, REWRITE, read_text  # noqa: E402
from kit.chromium import launch  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
VECTORS = ROOT / DEFAULT_PATH

TIMED = """
async ({ cases, repeat }) => {
  const t0 = performance.now();
  const M = await import("/js/bearing/index.js");
  const imported = performance.now() - t0;
  const prepared = cases.map((c) => [c.input, M.basisFromDict(c.basis)]);
  const t1 = performance.now();
  M.checkBearing(...prepared[0]);
  const first = performance.now() - t1;
  for (const [input, basis] of prepared) M.checkBearing(input, basis);
  const perCall = [];
  let kept = 0; // uses every result, so no call can be optimised away
  for (const [input, basis] of prepared) {
    const s = performance.now();
    for (let k = 0; k < repeat; k++) kept += M.checkBearing(input, basis).checks.length;
    perCall.push((performance.now() - s) / repeat);
  }
  return { imported, first, perCall, kept };
}
"""


class _QuietHandler(SimpleHTTPRequestHandler):
    def log_message(self, *args):  # the benchmark prints figures, not requests
        pass


def percentile(values: list[float], p: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, round(p / 100 * (len(ordered) - 1)))]


def main() -> int:
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeat", type=int, default=500, help="calls per case, timed together")
    parser.add_argument("--rates", default="1,4", help="CDP CPU throttling rates, comma separated")
    args = parser.parse_args()
    chromium = shutil.which("chromium")
    if not chromium:
        print("chromium not found: apt-get install -y chromium", file=sys.stderr)
        return 2
    if not VECTORS.is_file():
        print(f"{VECTORS} missing: {REWRITE} {VECTORS}", file=sys.stderr)
        return 2
    cases = json.loads(read_text(VECTORS))["check"]

    handler = functools.partial(_QuietHandler, directory=str(ROOT / "static"))
    server = ThreadingHTTPServer(("127.0.0.1", 0), handler)
    threading.Thread(target=server.serve_forever, daemon=True).start()
    base = f"http://127.0.0.1:{server.server_port}"
    print(f"checkBearing over {len(cases)} vector cases, {args.repeat} calls each")
    try:
        with sync_playwright() as p:
            browser = launch(p, chromium)
            for rate in (float(r) for r in args.rates.split(",")):
                # A fresh page per rate, throttled before the import: the cold figures
                # are then those of a phone opening the form.
                page = browser.new_page()
                cdp = page.context.new_cdp_session(page)
                cdp.send("Emulation.setCPUThrottlingRate", {"rate": rate})
                page.goto(base + "/app.css")  # any file of ours gives the page its origin
                out = page.evaluate(TIMED, {"cases": cases, "repeat": args.repeat})
                page.close()
                per = out["perCall"]
                print(
                    f"CPU {rate:g}x: median {statistics.median(per) * 1000:7.1f} µs  "
                    f"p95 {percentile(per, 95) * 1000:7.1f} µs  "
                    f"slowest {max(per) * 1000:7.1f} µs per call; "
                    f"import {out['imported']:.1f} ms, first call {out['first']:.1f} ms"
                )
            browser.close()
    finally:
        server.shutdown()
    print("target: a verdict within 50 ms of a keystroke at 4x throttle")
    return 0


if __name__ == "__main__":
    sys.exit(main())
