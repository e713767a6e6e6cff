"""Load on a real server: throughput and latency of light requests, with and without a heavy job.

    python tests/benchmarks/bench_load.py [--port 8116] [--seconds 8] [--requests 400]

Starts ``growthcore serve`` on 127.0.0.1 (loopback only; nothing else is contacted), then for 1,
4, 16 and 32 concurrent clients sends light requests (the page itself and a small callback, as a
tab does on every click) for at most ``--seconds`` or ``--requests`` each, first with the server
otherwise idle and then while one heavy job is in flight the whole time (an upload of an invented
1.8 M-cell CSV, read and checked in full: several seconds of work, started again as soon as it
ends). Prints requests per second and the median and 95th-percentile latency of each run, side
by side. Target: a light request's p95 stays under 250 ms while one heavy job runs (a script,
not a timed test).
"""

from __future__ import annotations

import argparse
import base64
import json
import os
import subprocess
import sys
import threading
import time
import urllib.error
import urllib.request
from typing import Any

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
HOST = "127.0.0.1"
CLIENTS = (1, 4, 16, 32)
TARGET_P95_MS = 250.0


def _post(url: str, payload: dict, timeout: float = 120.0) -> int:
    body = json.dumps(payload).encode("utf-8")
    req = urllib.request.Request(url + "_dash-update-component", data=body,
                                 headers={"Content-Type": "application/json"})
    with urllib.request.urlopen(req, timeout=timeout) as reply:
        reply.read()
        return reply.status


def _get(url: str, timeout: float = 30.0) -> int:
    with urllib.request.urlopen(url, timeout=timeout) as reply:
        reply.read()
        return reply.status


def _light_callback(deps: list[dict]) -> dict:
    """The error-banner dismissal: a real callback whose own work is nothing, so its latency is the server's."""
    dep = next(d for d in deps if d["output"].startswith("app-error.hidden"))
    out_id, _, prop = dep["output"].partition("@")[0].partition(".")
    return {"output": dep["output"], "outputs": {"id": out_id, "property": prop},
            "inputs": [{"id": "app-error-dismiss", "property": "n_clicks", "value": 1}],
            "changedPropIds": ["app-error-dismiss.n_clicks"], "state": []}


def invented_upload(rows: int = 20_000, columns: int = 90) -> tuple[str, int]:
    """A data URL of an invented plate export: a time column and 89 wells of plain numbers."""
    lines = ["hours," + ",".join(f"well_{j}" for j in range(1, columns))]
    for i in range(rows):
        wells = ",".join(f"{1 + ((i * 7 + j * 13) % 97) / 100:.2f}" for j in range(1, columns))
        lines.append(f"{i * 0.01:.2f},{wells}")
    raw = ("\n".join(lines) + "\n").encode("ascii")
    return "data:text/csv;base64," + base64.b64encode(raw).decode("ascii"), len(raw)


def _heavy_callback(deps: list[dict], contents: str) -> dict:
    dep = next(d for d in deps if d["output"].startswith("..store-source.data...store-data.data...data-message"))
    outputs = []
    for part in dep["output"].strip(".").split("..."):
        i, _, p = part.partition(".")
        outputs.append({"id": i, "property": p})
    values = {("data-upload", "contents"): contents, ("data-upload", "filename"): "invented_plate.csv"}

    def fill(items: list[dict[str, Any]]) -> list[dict[str, Any]]:
        return [{"id": x["id"], "property": x["property"], "value": values.get((x["id"], x["property"]))}
                for x in items]

    return {"output": dep["output"], "outputs": outputs, "inputs": fill(dep["inputs"]), "state": fill(dep["state"]),
            "changedPropIds": ["data-upload.contents"]}


def run_level(url: str, light: dict, clients: int, seconds: float, limit: int) -> tuple[int, float, list[float], int]:
    """``clients`` threads sending light requests; (count, elapsed s, latencies ms, errors)."""
    latencies: list[float] = []
    errors = [0]
    lock = threading.Lock()
    deadline = time.monotonic() + seconds
    sent = [0]

    def client(k: int) -> None:
        while time.monotonic() < deadline:
            with lock:
                if sent[0] >= limit:
                    return
                sent[0] += 1
                n = sent[0]
            t0 = time.perf_counter()
            try:
                status = _get(url) if n % 2 else _post(url, light)
                ok = status == 200
            except (urllib.error.URLError, OSError):
                ok = False
            ms = (time.perf_counter() - t0) * 1000
            with lock:
                latencies.append(ms)
                errors[0] += 0 if ok else 1

    started = time.monotonic()
    threads = [threading.Thread(target=client, args=(k,)) for k in range(clients)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    return len(latencies), time.monotonic() - started, latencies, errors[0]


def _pct(values: list[float], q: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(round(q * (len(ordered) - 1))))] if ordered else float("nan")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--port", type=int, default=8116)
    parser.add_argument("--seconds", type=float, default=8.0, help="longest run per level (default 8)")
    parser.add_argument("--requests", type=int, default=400, help="most requests per level (default 400)")
    args = parser.parse_args()
    url = f"http://{HOST}:{args.port}/"
    env = {**os.environ, "PYTHONPATH": ROOT + os.pathsep + os.environ.get("PYTHONPATH", "")}
    server = subprocess.Popen([sys.executable, "-m", "growthcore", "serve", "--host", HOST, "--port", str(args.port),
                               "--no-browser"], env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        for _ in range(300):
            try:
                _get(url, timeout=2)
                break
            except (urllib.error.URLError, OSError):
                time.sleep(0.2)
        else:
            print("the server did not start", file=sys.stderr)
            return 1
        with urllib.request.urlopen(url + "_dash-dependencies") as reply:
            deps = json.loads(reply.read())
        light = _light_callback(deps)
        contents, size = invented_upload()
        heavy = _heavy_callback(deps, contents)
        t0 = time.perf_counter()
        _post(url, heavy)
        heavy_s = time.perf_counter() - t0
        print(f"server: growthcore serve on {url} (loopback); heavy job: upload of an invented "
              f"{size / 1e6:.1f} MB CSV (1.8 M cells) read and checked in full, {heavy_s:.1f} s alone")
        print(f"{'clients':>7} {'heavy job':>10} {'requests':>8} {'errors':>6} {'req/s':>7} "
              f"{'p50 ms':>7} {'p95 ms':>7}")
        results: dict[tuple[int, bool], float] = {}
        for clients in CLIENTS:
            for with_heavy in (False, True):
                stop = threading.Event()
                heavy_runs = [0]

                def keep_heavy(stop: threading.Event, heavy_runs: list[int]) -> None:
                    while not stop.is_set():
                        try:
                            _post(url, heavy)
                        except (urllib.error.URLError, OSError):
                            pass
                        heavy_runs[0] += 1

                runner = (threading.Thread(target=keep_heavy, args=(stop, heavy_runs), daemon=True)
                          if with_heavy else None)
                if runner:
                    runner.start()
                    time.sleep(0.5)  # the job is under way before the light requests start
                n, elapsed, lat, errors = run_level(url, light, clients, args.seconds, args.requests)
                stop.set()
                if runner:
                    runner.join(120)
                p50, p95 = _pct(lat, 0.5), _pct(lat, 0.95)
                results[(clients, with_heavy)] = p95
                heavy_now = "in flight" if with_heavy else "none"
                print(f"{clients:>7} {heavy_now:>10} {n:>8} {errors:>6} {n / elapsed:>7.1f} "
                      f"{p50:>7.1f} {p95:>7.1f}")
        p95 = results[(1, True)]
        verdict = "met" if p95 < TARGET_P95_MS else "NOT met"
        print(f"light p95 while one heavy job runs (1 client): {p95:.0f} ms against {TARGET_P95_MS:.0f} ms: {verdict}; "
              f"idle: {results[(1, False)]:.0f} ms, ratio {p95 / max(results[(1, False)], 1e-9):.1f}")
        return 0 if p95 < TARGET_P95_MS else 1
    finally:
        server.terminate()
        try:
            server.wait(10)
        except subprocess.TimeoutExpired:
            server.kill()


if __name__ == "__main__":
    sys.exit(main())
