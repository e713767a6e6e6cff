"""The server's own limits against forged tab state, its Host allow-list and security headers,
and heavy jobs run in worker processes under a bound, a time budget and a memory cap.

Outside references: the header names and values follow the W3C Content Security Policy Level 3
recommendation (frame-ancestors, script-src with hash sources) and RFC 7034 (X-Frame-Options);
``nosniff`` is from the WHATWG Fetch standard; status 421 (Misdirected Request) is RFC 9110
section 15.5.20. The DNS-rebinding defence by Host-header check is common practice.
"""

from __future__ import annotations

import base64
import threading
import time

import pytest
from dash import no_update

from growthcore.app import ids
from growthcore.app.callbacks.data import import_source, on_import
from growthcore.app.callbacks.dynamics.bootstrap import bootstrap_step
from growthcore.app.callbacks.dynamics.forecast import compute_forecast
from growthcore.app.callbacks.series.groups import compute_groups
from growthcore.app.heavy import HeavyConfig, HeavyRefused, HeavyRunner
from growthcore.app.server import allowed_hosts_for, create_app
from growthcore.errors import ImportFailure
from growthcore.limits import DEFAULT, Limits


@pytest.fixture(scope="module")
def app():
    return create_app()


def _b64(data: bytes) -> str:
    return base64.b64encode(data).decode("ascii")


def _culture(n: int = 24) -> bytes:
    """Invented culture densities (tests only)."""
    return ("Time (h),OD\n" + "".join(f"{i},{80 / (1 + 39 * 2.718281828 ** (-0.45 * i)):.6g}\n"
                                      for i in range(n))).encode()


# ----------------------------------------------------------------------------- headers and hosts

def test_security_headers_on_every_answer(app) -> None:
    client = app.server.test_client()
    for path in ("/", "/_dash-layout", "/no-such-page"):
        reply = client.get(path)
        policy = reply.headers["Content-Security-Policy"]
        assert "frame-ancestors 'none'" in policy and "object-src 'none'" in policy
        assert "script-src 'self' 'sha256-" in policy  # the framework's inline scripts by hash, no 'unsafe-inline'
        assert "'unsafe-inline'" not in policy.split("script-src", 1)[1].split(";", 1)[0]
        assert reply.headers["X-Frame-Options"] == "DENY"
        assert reply.headers["X-Content-Type-Options"] == "nosniff"


def test_host_header_allow_list(app) -> None:
    client = app.server.test_client()
    for host in ("127.0.0.1:8050", "localhost:8050", "[::1]:8050", "LOCALHOST"):
        assert client.get("/", headers={"Host": host}).status_code == 200, host
    # a page elsewhere reaching the loopback port by DNS rebinding sends its own name
    for host in ("evil.example:8050", "127.0.0.1.evil.example", "attacker.test"):
        reply = client.get("/_dash-layout", headers={"Host": host})
        assert reply.status_code == 421, host
        assert b"answers only to the host names" in reply.data
        assert b"algae_photobioreactor" not in reply.data  # the layout (with the --data file) is not sent


def test_allowed_hosts_follow_the_serve_address() -> None:
    assert allowed_hosts_for("127.0.0.1") == frozenset({"127.0.0.1", "localhost", "::1"})
    assert "lab-box.local" in allowed_hosts_for("lab-box.local")
    assert {"127.0.0.1", "localhost"} <= allowed_hosts_for("0.0.0.0")


# ----------------------------------------------------------------------------- limits the tab cannot move

def test_upload_byte_limit_is_the_servers_not_the_tabs() -> None:
    """A forged store (an 18 MB file, the tab's max_bytes raised) is refused before decoding."""
    forged = {"filename": "big.csv", "b64": _b64(b"0" * 18_000_000), "max_bytes": 10**10}
    limits = Limits(max_bytes=10_000_000)
    with pytest.raises(ImportFailure, match=r"18,000,000 bytes, over the limit of 10,000,000 bytes"):
        import_source(forged, limits=limits)
    out = on_import(None, 1, None, "big.csv", forged, None, None, None, None, None, None,
                    trigger=ids.MAP_APPLY, limits=limits)
    assert "over the limit of 10,000,000 bytes" in str(out[2])


def _fit_store() -> tuple[dict, dict]:
    from growthcore.app.callbacks.fits import compute_fits

    data = import_source({"filename": "c.csv", "b64": _b64(_culture())})
    settings = {"models": ["logistic"], "methods": ["trajectory"], "method": "trajectory", "error": "additive",
                "terms": []}
    return data, compute_fits(data, None, settings, None)


def test_forged_bootstrap_run_is_refused() -> None:
    data, fits = _fit_store()
    label = fits["fits"][0]["label"]
    from growthcore.app.callbacks.dynamics.which_fit import find_fit, fit_signature

    sig = fit_signature(fits, find_fit(fits, label))
    for forged in ({"requested": 1_000_000, "chunk": 50}, {"requested": 100, "chunk": 10**7}):
        boot = {"state": "running", "label": label, "done": 0, "seed": 1, "signature": sig, "result": None,
                "elapsed": 0.0, "cancel_seen": 0, **forged}
        started = time.monotonic()
        out, _, more = bootstrap_step(boot, {}, 0, fits, data, None)
        assert out["state"] == "refused" and "more than the server allows" in out["message"] and more is False
        assert time.monotonic() - started < 5


def test_forged_forecast_request_is_checked_again() -> None:
    data, fits = _fit_store()
    label = fits["fits"][0]["label"]
    out = compute_forecast({"mode": "steps", "amount": 500_000_000, "bound": None}, label, fits, data, None, {})
    assert "Steps ahead must be a whole number from 1 to 2,000" in out["error"]
    # a time span is counted in the fit's steps: a long one is refused before any draw is made
    started = time.monotonic()
    out = compute_forecast({"mode": "span", "amount": 1e12, "bound": None}, label, fits, data, None, {})
    assert "over the limit of 2,000 steps: refused" in out["error"] and time.monotonic() - started < 5


def test_forecast_length_is_the_servers() -> None:
    """A server configured for shorter forecasts refuses longer ones, typed as steps or as a time span."""
    data, fits = _fit_store()
    label = fits["fits"][0]["label"]
    app = create_app(limits=Limits(max_forecast_steps=30))
    with app.server.app_context():
        assert "from 1 to 30;" in compute_forecast({"mode": "steps", "amount": 31, "bound": None}, label, fits, data,
                                                   None, {})["error"]
        span = compute_forecast({"mode": "span", "amount": 1e3, "bound": None}, label, fits, data, None, {})
        assert "over the limit of 30 steps" in span["error"]
        assert len(compute_forecast({"mode": "steps", "amount": 30, "bound": None}, label, fits, data, None,
                                    {})["points"]) == 30


def test_pattern_length_is_the_servers() -> None:
    batch = {"key": "k", "names": ["a1", "a2"]}
    _, message, _, _ = compute_groups("pattern", "(a)" * 100, batch, limits=Limits(max_pattern=50))
    assert "over the limit of 50" in str(message)
    store, _, options, _ = compute_groups("pattern", r"^(a+)+$", {"key": "k", "names": ["a" * 28 + "!", "aa"]})
    assert store["groups"] == {"aa": "aa"}


# ----------------------------------------------------------------------------- heavy jobs

def test_heavy_job_budget_and_memory_cap() -> None:
    runner = HeavyRunner(HeavyConfig(budget_s=2.0, memory_bytes=2 * 1024**3))
    assert runner.run("a sum", sum, [1, 2, 3]) == 6
    started = time.monotonic()
    with pytest.raises(HeavyRefused, match=r"longer than the time budget of 2 s and was stopped"):
        runner.run("sleeping", time.sleep, 60)
    assert time.monotonic() - started < 15
    with pytest.raises(HeavyRefused, match=r"needed more than the 2 GB a job may use"):
        runner.run("allocating", bytearray, 3 * 1024**3)
    with pytest.raises(ImportFailure, match="over the limit"):  # input errors pass through as they are
        runner.run("reading", import_source, {"filename": "w.csv", "b64": _b64(b"t,p\n" + b"1," * 5000)})


def test_heavy_jobs_beyond_the_slots_wait_then_are_refused() -> None:
    runner = HeavyRunner(HeavyConfig(slots=1, wait_s=0.5, processes=False))
    started = threading.Event()

    def hold() -> None:
        started.set()
        time.sleep(2)

    worker = threading.Thread(target=runner.run, args=("holding", hold))
    worker.start()
    started.wait(5)
    with pytest.raises(HeavyRefused, match=r"busy with 1 heavy job"):
        runner.run("a second job", sum, [1])
    worker.join()
    assert runner.run("after", sum, [2]) == 2


def test_heavy_jobs_beyond_the_queue_are_refused_at_once() -> None:
    """A job waiting for a slot holds a server thread: past ``slots + queue`` jobs the next is refused
    without waiting, so that threads stay free for light requests however many heavy ones arrive."""
    runner = HeavyRunner(HeavyConfig(slots=1, queue=1, wait_s=30, processes=False))
    release, running = threading.Event(), threading.Event()

    def hold() -> None:
        running.set()
        release.wait(10)

    first = threading.Thread(target=runner.run, args=("holding", hold))
    first.start()
    assert running.wait(5)
    second = threading.Thread(target=runner.bounded, args=("waiting", sum, [1]))
    second.start()
    for _ in range(500):
        if runner.waiting == 1:
            break
        time.sleep(0.01)
    assert runner.waiting == 1 and runner.running == 1
    for call in (runner.run, runner.bounded):
        started = time.monotonic()
        with pytest.raises(HeavyRefused, match=r"busy with 1 heavy job.*\(1 more are waiting\)"):
            call("a third job", sum, [2])
        assert time.monotonic() - started < 5  # refused at once, not after the 30 s wait
    release.set()
    first.join(10)
    second.join(10)
    assert runner.running == runner.waiting == 0
    assert runner.run("after", sum, [3]) == 3


def test_serve_keeps_threads_for_light_requests(app, monkeypatch) -> None:
    import waitress

    from growthcore.app.server import DEFAULT_THREADS, serve

    heavy = HeavyConfig()
    assert DEFAULT_THREADS > heavy.slots + heavy.queue
    monkeypatch.setattr(waitress, "serve", lambda wsgi, **kw: None)
    with pytest.raises(ValueError, match=rf"more than {heavy.slots + heavy.queue} threads"):
        serve(app, threads=heavy.slots + heavy.queue, open_browser=False)


def test_serve_takes_the_startup_heap_out_of_the_collectors_walks(app, monkeypatch) -> None:
    """Common practice (the gc module's documentation on gc.freeze): objects that live as long as the
    process are frozen before serving, so that full collections during requests do not walk them."""
    import gc

    import waitress

    from growthcore.app.server import serve

    frozen: list[int] = []
    monkeypatch.setattr(waitress, "serve", lambda wsgi, **kw: frozen.append(gc.get_freeze_count()))
    monkeypatch.setattr(app.server.config["GROWTHCORE_HEAVY"], "warm", lambda: None)
    try:
        serve(app, open_browser=False)
    finally:
        gc.unfreeze()
    assert frozen and frozen[0] > 10_000  # the modules and the app, at least


def test_defaults_meet_the_app_limits() -> None:
    from growthcore.app.components.dynamics import MAX_RESAMPLES

    assert MAX_RESAMPLES <= DEFAULT.max_resamples  # the box's maximum is one the engine accepts


def test_the_app_reopens_every_record_the_command_line_reopens(app) -> None:
    from growthcore.app.callbacks.export import record_upload_chars

    assert record_upload_chars(DEFAULT) * 3 // 4 >= DEFAULT.max_record_bytes  # base64: 3 bytes in 4 characters
    assert app.server.config["MAX_CONTENT_LENGTH"] > record_upload_chars(DEFAULT)


def test_checks_of_what_the_tab_sends_use_the_servers_own_limits() -> None:
    """A server made with other limits holds the tab's data, settings and records to those limits, not
    to the defaults: points of a series, fits asked for, size of a reopened record, chunks of a batch."""
    import dataclasses

    from growthcore.app.callbacks.export import decode_upload
    from growthcore.app.callbacks.fits import compute_fits
    from growthcore.app.callbacks.series.run import fit_chunk
    from growthcore.app.server import create_app
    from growthcore.app.state import current_limits, series_from_store
    from growthcore.errors import GrowthcoreInputError
    from growthcore.reopen import RecordError

    tight = dataclasses.replace(DEFAULT, max_points=30, max_fits=2, max_record_bytes=3_000, max_series=2)
    app = create_app(limits=tight)
    store = {"t": list(range(40)), "p": [1.0 + 0.1 * k for k in range(40)], "name": "s", "key": "k"}
    record = "data:application/json;base64," + "A" * 8_000
    series_from_store(store)  # outside a request: the defaults
    with app.server.test_request_context():
        assert current_limits().max_points == 30
        with pytest.raises(GrowthcoreInputError, match="over the limit of 30 points"):
            series_from_store(store)
        with pytest.raises(GrowthcoreInputError, match="over the limit of 2 fits"):
            compute_fits({**store, "t": store["t"][:20], "p": store["p"][:20]}, None,
                         {"models": ["logistic", "gompertz", "ricker"], "method": "increments"}, None)
        with pytest.raises(RecordError, match="larger than"):
            decode_upload(record, "big.json")
    job = {"chunk": 1, "models": ["logistic"], "methods": ["increments"]}
    batch = {"series": [store, store, store]}
    with pytest.raises(GrowthcoreInputError, match="not one this server makes"):
        fit_chunk(job, batch, None, 0, tight)


def test_the_app_refuses_a_rehashed_record_the_command_line_refuses(tmp_path) -> None:
    """A record re-sealed with more points than an import lets through is refused by the app with
    the command line's own message (the same check of growthcore.reopen), before any refit."""
    import json

    from growthcore.app.callbacks.export import on_record_upload
    from growthcore.cli import main
    from growthcore.record import seal

    data, out = tmp_path / "c.csv", tmp_path / "r.json"
    data.write_bytes(_culture())
    assert main(["fit", str(data), "--out", str(out), "--no-profile"]) == 0
    record = json.loads(out.read_text(encoding="utf-8"))
    last = record["data"]["points"][-1]
    record["data"]["points"] = [dict(last, t=float(i), row=i + 2) for i in range(DEFAULT.max_points + 1)]
    text = json.dumps(seal(record))
    started = time.monotonic()
    reply = on_record_upload("data:application/json;base64," + _b64(text.encode()), "forged.json")
    assert "Not reopened" in str(reply[-1]) and "over the limit of 20,000 points" in str(reply[-1])
    from dash import no_update

    assert all(x is no_update for x in reply[:-1])  # the session is unchanged
    assert time.monotonic() - started < 30
    forged = tmp_path / "forged.json"
    forged.write_text(text, encoding="utf-8")
    assert main(["fit", "--from-record", str(forged)]) == 1


def test_forged_settings_cannot_ask_for_unbounded_fits() -> None:
    from growthcore.app.callbacks.fits import compute_fits
    from growthcore.errors import GrowthcoreInputError

    data = import_source({"filename": "c.csv", "b64": _b64(_culture())})
    settings = {"models": ["logistic"] * 1000, "method": "both", "error": "additive", "terms": []}
    with pytest.raises(GrowthcoreInputError, match=r"over the limit of 40 fits"):
        compute_fits(data, None, settings, None)


def test_a_result_that_cannot_travel_is_named() -> None:
    runner = HeavyRunner(HeavyConfig(budget_s=30))
    with pytest.raises(RuntimeError, match=r"failed in its worker \((PicklingError|AttributeError|TypeError)"):
        runner.run("a job", threading.Lock)  # a lock cannot be pickled back
    assert runner.bounded("in this thread", threading.Lock) is not None


# ----------------------------------------------------------------------------- which reads need a worker

def _counting_runner() -> tuple[list[str], object]:
    jobs: list[str] = []

    def run(what, func, *args, **kwargs):
        jobs.append(what)
        return func(*args, **kwargs)

    return jobs, run


def test_a_small_text_file_is_read_in_the_request_a_workbook_or_large_file_by_a_worker(tmp_path) -> None:
    """Starting a worker costs more than reading a small CSV (measured in tests/benchmarks/bench_browser.py):
    a series switch of a small text file is read in the request's thread; a workbook, whose packed size says
    little about its cells, and a file over LIGHT_READ_BYTES go to a worker."""
    import pandas as pd

    from growthcore.app.callbacks.data import LIGHT_READ_BYTES, is_light_read

    small = {"filename": "invented_culture.csv", "b64": _b64(_culture())}
    rows = LIGHT_READ_BYTES // 40  # four wells, lines of over 40 bytes
    large = {"filename": "invented_wells.csv",
             "b64": _b64(b"Time (h),A1,A2,A3,A4\n" + b"".join(
                 b"%d,%.6f,%.6f,%.6f,%.6f\n" % (i, 1 + i * 1e-6, 2 + i * 1e-6, 3 + i * 1e-6, 4 + i * 1e-6)
                 for i in range(rows)))}
    book_path = tmp_path / "invented_culture.xlsx"
    pd.DataFrame({"Time (h)": range(24), "OD": [1.0 + i for i in range(24)]}).to_excel(book_path, index=False)
    book = {"filename": book_path.name, "b64": _b64(book_path.read_bytes())}
    assert is_light_read(small)
    assert not is_light_read(large) and len(large["b64"]) * 3 // 4 > LIGHT_READ_BYTES
    assert not is_light_read(book)
    assert not is_light_read({"filename": "damaged.csv", "b64": "%%%%not base64%%%%"})
    for source, expected in ((small, []), (book, ["reading the file"]), (large, ["reading the file"])):
        jobs, run = _counting_runner()
        out = on_import(None, 0, None, None, source, None, None, None, None, None, None, trigger=ids.SERIES_PICK,
                        run=run, max_bytes=DEFAULT.max_bytes)
        assert jobs == expected, source["filename"]
        assert out[1] is not no_update and out[1]["series_names"], (source["filename"], out[2])  # read either way
