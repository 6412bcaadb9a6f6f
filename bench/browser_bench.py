"""Browser figures for `cargo xtask bench`, in headless Chromium (the same flags as the browser tests:
tests/python/browser.py). Prints one JSON object.

  python bench/browser_bench.py wasm PAGE.html REPEATS ROUNDS
      the whole-project recompute timed inside the page by performance.now (best of REPEATS, ROUNDS times)
  python bench/browser_bench.py bundle dist/ohmstack.html LOADS
      size raw and gzip, and from navigation start of LOADS fresh loads of the demo: first results
      (main#app[data-ready='true'] present, the closed-form preview), every rule card on field figures (none
      pending), and every figure final with its spread (main#app[data-settled='true'])
  python bench/browser_bench.py worker dist/ohmstack.html PROJECT.json EDITS [field]
      the plan worker on PROJECT (with `field`: every rule's model set to the field solver): the whole plan with
      spread (project opened → every rule's field row in, cold cache); after each of EDITS one-rule edits, the time
      until the edited rule's field figures land, and its spread; and the main thread's long tasks (PerformanceObserver 'longtask',
      count and longest) while typing into a rule's target key by key
"""
import gzip
import json
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests" / "python"))
import browser  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402


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
    times, field, settled = [], [], []
    for _ in range(loads):
        d = browser.start()
        try:
            # Record the moments from inside the page, before any of its scripts run, so each figure is navigation
            # start → that moment however late the driver gets to look: the first results (the closed-form
            # preview), every rule card on its field figures (none pending), and every figure final (the spread).
            d.execute_cdp_cmd("Page.addScriptToEvaluateOnNewDocument", {"source": """
                new MutationObserver((_, obs) => {
                  const app = document.querySelector("main#app[data-ready='true']");
                  if (!app) return;
                  const now = performance.now();
                  window.__ohmReady = window.__ohmReady || now;
                  const cards = document.querySelectorAll("[data-field]");
                  if (!window.__ohmField && cards.length && !document.querySelector("[data-field='pending']")) {
                    window.__ohmField = now;
                  }
                  if (app.dataset.settled === "true") { window.__ohmSettled = now; obs.disconnect(); }
                }).observe(document, {subtree: true, childList: true, attributes: true});
            """})
            d.get(Path(path).resolve().as_uri())
            t = browser.wait_for(lambda: d.execute_script(
                "return window.__ohmReady || (document.body && document.body.dataset.loadError ? -1 : 0)"),
                120, "the app to show results")
            if t >= 0:
                browser.wait_for(lambda: d.execute_script("return window.__ohmSettled"), 120,
                                 "every figure of the demo to settle")
                field.append(d.execute_script("return window.__ohmField"))
                settled.append(d.execute_script("return window.__ohmSettled"))
        finally:
            d.quit()
        if t < 0:
            raise SystemExit("the app failed to start")
        times.append(t)
    return {"dist_bytes": len(raw), "dist_gzip_bytes": len(gzip.compress(raw, 9)),
            "first_results_best_ms": min(times), "first_results_median_ms": statistics.median(times),
            "demo_field_figures_median_ms": statistics.median(field), "demo_field_figures_max_ms": max(field),
            "demo_settled_median_ms": statistics.median(settled), "demo_settled_max_ms": max(settled),
            "loads": loads}


# Installed before the page's scripts: every long task of the main thread, and the moments the app's field state
# changes (a new generation sent, the plan settled, a rule card's row landing).
WORKER_PROBE = """
window.__long = [];
new PerformanceObserver((list) => {
  for (const e of list.getEntries()) window.__long.push([e.startTime, e.duration]);
}).observe({type: 'longtask', buffered: true});
window.__events = [];
new MutationObserver((records) => {
  const t = performance.now();
  for (const r of records) {
    const el = r.target;
    if (el.id === 'app' && r.attributeName === 'data-settled') {
      window.__events.push([t, 'settled', el.getAttribute('data-settled'), el.getAttribute('data-field-generation')]);
    } else if (el.id === 'app' && r.attributeName === 'data-field-generation') {
      window.__events.push([t, 'generation', el.getAttribute('data-field-generation')]);
    } else if (r.attributeName === 'data-field' && el.dataset.testid) {
      window.__events.push([t, 'card', el.dataset.testid, el.getAttribute('data-field'),
                            document.getElementById('app').getAttribute('data-field-generation')]);
    }
  }
}).observe(document, {subtree: true, attributes: true,
                      attributeFilter: ['data-settled', 'data-field-generation', 'data-field']});
"""


def worker(page: str, project_path: str, edits: int, all_field: bool):
    import tempfile
    project = json.loads(Path(project_path).read_text())
    if all_field:
        for r in project["rules"]:
            r["model"] = "field_solver"
    tmp = Path(tempfile.mkdtemp(prefix="ohmstack-bench-")) / "project.json"
    tmp.write_text(json.dumps(project))
    d = browser.start()
    try:
        d.execute_cdp_cmd("Page.addScriptToEvaluateOnNewDocument", {"source": WORKER_PROBE})
        d.get(Path(page).resolve().as_uri())
        browser.wait_ready(d, 120)
        runner = d.execute_script("return document.getElementById('app').dataset.fieldRunner")
        settled = lambda: d.execute_script(  # noqa: E731
            "return document.getElementById('app').dataset.settled === 'true'")
        generation = lambda: int(d.execute_script(  # noqa: E731
            "return document.getElementById('app').dataset.fieldGeneration"))
        # (b) the whole plan with spread: open the project (cold cache for its rules) and wait for every row.
        g0 = generation()
        d.execute_script("window.__events = [];")
        d.find_element(By.ID, "open-file").send_keys(str(tmp))
        browser.wait_for(lambda: generation() > g0 and settled(), 300, "the whole field plan")
        events = d.execute_script("return window.__events")
        sent = next(e[0] for e in events if e[1] == "generation")
        done = max(e[0] for e in events if e[1] == "settled" and e[2] == "true")
        whole_ms = done - sent
        computations0 = int(d.execute_script("return document.getElementById('app').dataset.fieldComputations"))
        # (a) one-rule edits: the time from the input event to the edited card's field row.
        n_rules = len(project["rules"])
        edit_ms, spread_ms = [], []
        for k in range(edits):
            i = (k * 5) % n_rules
            g = generation()
            d.execute_script("window.__events = [];")
            t0 = d.execute_script("""
                const el = document.getElementById(arguments[0]);
                const t = performance.now();
                el.value = String(Number(el.value) + 0.5);
                el.dispatchEvent(new InputEvent('input', {bubbles: true}));
                return t;""", f"rule-{i}-target-input")
            browser.wait_for(lambda: generation() > g and settled(), 300, "the edited plan")
            events = d.execute_script("return window.__events")
            card = [e for e in events if e[1] == "card" and e[2] == f"rule-card-{i}" and int(e[4]) > g]
            # The field figures: the card leaves "pending" (nominal figures, or everything at once); the spread:
            # the card is "landed".
            edit_ms.append(min(e[0] for e in card if e[3] in ("nominal", "landed")) - t0)
            spread_ms.append(min(e[0] for e in card if e[3] == "landed") - t0)
        computed = int(d.execute_script(
            "return document.getElementById('app').dataset.fieldComputations")) - computations0
        # (c) typing: key by key into one target (a new project, preview and request per keystroke), at about
        # 8 keys a second, then until the plan settles.
        field = d.find_element(By.ID, "rule-3-target-input")
        field.click()
        d.execute_script("window.__long = [];")
        t_type = d.execute_script("return performance.now()")
        keys = 0
        for text in ["\b\b\b", "5", "1", ".", "5", "\b\b\b", "4", "9", ".", "2", "5"]:
            for ch in text:
                field.send_keys(ch)
                keys += 1
                time.sleep(0.12)
        t_typed = d.execute_script("return performance.now()")
        browser.wait_for(settled, 300, "the plan after typing")
        t_settled = d.execute_script("return performance.now()")
        long_tasks = [e for e in d.execute_script("return window.__long") if e[0] >= t_type]
        while_typing = [dur for start, dur in long_tasks if start <= t_typed]
        ua = d.execute_script("return navigator.userAgent")
    finally:
        d.quit()
    return {
        "runner": runner, "rules": n_rules, "all_field": all_field,
        "whole_plan_ms": whole_ms,
        "edit_to_field_ms": edit_ms, "edit_median_ms": statistics.median(edit_ms), "edit_max_ms": max(edit_ms),
        "edit_to_spread_ms": spread_ms, "spread_median_ms": statistics.median(spread_ms),
        "spread_max_ms": max(spread_ms),
        "rules_computed_for_edits": computed, "edits": edits,
        "typing_keys": keys, "typing_ms": t_typed - t_type, "settle_after_typing_ms": t_settled - t_typed,
        "long_tasks_while_typing": len(while_typing),
        "longest_task_while_typing_ms": max(while_typing, default=0.0),
        "long_tasks_until_settled": len(long_tasks),
        "longest_task_until_settled_ms": max((dur for _, dur in long_tasks), default=0.0),
        "user_agent": ua,
    }


def main():
    what = sys.argv[1]
    if what == "wasm":
        out = wasm(sys.argv[2], int(sys.argv[3]), int(sys.argv[4]))
    elif what == "bundle":
        out = bundle(sys.argv[2], int(sys.argv[3]))
    elif what == "worker":
        out = worker(sys.argv[2], sys.argv[3], int(sys.argv[4]), len(sys.argv) > 5 and sys.argv[5] == "field")
    else:
        raise SystemExit(__doc__)
    print(json.dumps(out))


if __name__ == "__main__":
    main()
