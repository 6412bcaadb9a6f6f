"""Browser figures for `cargo xtask bench`, in headless Chromium (the same flags as the browser tests:
tests/python/browser.py). Prints one JSON object.

  python bench/browser_bench.py wasm PAGE.html REPEATS ROUNDS
      the whole-project recompute timed inside the page by performance.now (best of REPEATS, ROUNDS times)
  python bench/browser_bench.py bundle dist/ohmstack.html LOADS
      size raw and gzip, and time to first results: navigation start → main#app[data-ready='true'] present
      (best and median of LOADS fresh loads)
"""
import gzip
import json
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests" / "python"))
import browser  # noqa: E402


def wasm(page: str, repeats: int, rounds: int):
    d = browser.start()
    try:
        d.get(Path(page).resolve().as_uri())
        browser.wait_for(lambda: d.execute_script("return window.ohmBench && window.ohmBench.ready"), 120,
                         "the bench module to load")
        checksum = d.execute_script("return window.ohmBench.checksum()")
        best = [d.execute_script(f"return window.ohmBench.recompute({repeats})") for _ in range(rounds)]
        ua = d.execute_script("return navigator.userAgent")
    finally:
        d.quit()
    return {"wasm_best_ms": min(best), "wasm_round_bests_ms": best, "repeats": repeats, "checksum": checksum,
            "user_agent": ua}


def bundle(path: str, loads: int):
    raw = Path(path).read_bytes()
    times = []
    for _ in range(loads):
        d = browser.start()
        try:
            # Record the moment the results appear from inside the page, before any of its scripts run, so the
            # figure is navigation start → ready however late the driver gets to look.
            d.execute_cdp_cmd("Page.addScriptToEvaluateOnNewDocument", {"source": """
                new MutationObserver((_, obs) => {
                  if (document.querySelector("main#app[data-ready='true']")) {
                    window.__ohmReady = performance.now(); obs.disconnect();
                  }
                }).observe(document, {subtree: true, childList: true, attributes: true});
            """})
            d.get(Path(path).resolve().as_uri())
            t = browser.wait_for(lambda: d.execute_script(
                "return window.__ohmReady || (document.body && document.body.dataset.loadError ? -1 : 0)"),
                120, "the app to show results")
        finally:
            d.quit()
        if t < 0:
            raise SystemExit("the app failed to start")
        times.append(t)
    return {"dist_bytes": len(raw), "dist_gzip_bytes": len(gzip.compress(raw, 9)),
            "first_results_best_ms": min(times), "first_results_median_ms": statistics.median(times),
            "loads": loads}


def main():
    what = sys.argv[1]
    if what == "wasm":
        out = wasm(sys.argv[2], int(sys.argv[3]), int(sys.argv[4]))
    elif what == "bundle":
        out = bundle(sys.argv[2], int(sys.argv[3]))
    else:
        raise SystemExit(__doc__)
    print(json.dumps(out))


if __name__ == "__main__":
    main()
