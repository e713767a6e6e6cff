"""The app factory, its error pages and limits, and ``growthcore serve``."""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time
import urllib.request

import pytest

from growthcore.app import ids
from growthcore.app.server import create_app, is_loopback, serve

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


@pytest.fixture(scope="module")
def app():
    return create_app()


def _layout_ids(component) -> set[str]:
    found = set()
    if isinstance(getattr(component, "id", None), str):
        found.add(component.id)
    children = getattr(component, "children", None)
    for child in children if isinstance(children, (list, tuple)) else [children]:
        if hasattr(child, "to_plotly_json"):
            found |= _layout_ids(child)
    return found


def test_layout_holds_every_component_id(app) -> None:
    present = _layout_ids(app.layout)
    wanted = {v for k, v in vars(ids).items() if k.isupper() and isinstance(v, str)}
    wanted -= {ids.RESTORE, ids.SORT_BUTTON}  # pattern-matching types, made with the list and the table
    assert wanted <= present, sorted(wanted - present)


def test_page_and_limits(app) -> None:
    client = app.server.test_client()
    page = client.get("/")
    assert page.status_code == 200 and b'lang="en"' in page.data
    layout = client.get("/_dash-layout").get_data(as_text=True)
    assert "algae_photobioreactor.csv" in layout and "qualified professionals" in layout
    big = client.post("/_dash-update-component", data=b"x" * (app.server.config["MAX_CONTENT_LENGTH"] + 1),
                      content_type="application/json")
    assert big.status_code == 413 and b"files up to 10 MB" in big.data


def test_dev_tools_are_off(app) -> None:
    config = app._config()  # what the page is told
    assert config["ui"] is False and config["props_check"] is False and config["disable_version_check"] is True


def test_a_failing_callback_shows_our_message_not_a_traceback(app) -> None:
    client = app.server.test_client()
    # the reply to new data (app/callbacks/live.py), sent data it cannot read
    key = next(k for k in app.callback_map if k.lstrip(".").startswith(f"{ids.CAPACITY}.data"))
    cb = next(c for c in app._callback_list if c["output"] == key)
    values = {f"{ids.DATA}.data": {"key": "x", "t": "not a list"},
              f"{ids.SETTINGS}.data": {"models": ["logistic"], "method": "increments"}, f"{ids.CAPACITY}.data": 3.0}
    fill = lambda specs: [{**s, "value": values.get(f"{s['id']}.{s['property']}")} for s in specs]  # noqa: E731
    outputs = [{"id": i, "property": p} for i, p in (o.rsplit(".", 1) for o in key.strip(".").split("..."))]
    payload = {"output": key, "outputs": outputs,
               "inputs": fill(cb["inputs"]), "state": fill(cb["state"]), "changedPropIds": [f"{ids.DATA}.data"]}
    reply = client.post("/_dash-update-component", data=json.dumps(payload), content_type="application/json")
    assert reply.status_code == 200
    body = reply.get_json()
    text = json.dumps(body["sideUpdate"])
    assert "Something went wrong" in text and "Traceback" not in text
    assert body["sideUpdate"][ids.ERROR_BANNER] == {"hidden": False}


def test_loopback_addresses() -> None:
    assert is_loopback("127.0.0.1") and is_loopback("localhost") and is_loopback("::1")
    assert not is_loopback("0.0.0.0") and not is_loopback("192.168.1.10")


def test_serving_elsewhere_warns(app, monkeypatch, capsys) -> None:
    import waitress

    seen = {}
    monkeypatch.setattr(waitress, "serve", lambda wsgi, **kw: seen.update(kw))
    serve(app, host="0.0.0.0", port=8999, open_browser=False)
    err = capsys.readouterr().err
    assert "warning" in err and "anyone" in err
    assert seen["host"] == "0.0.0.0" and seen["max_request_body_size"] == app.server.config["MAX_CONTENT_LENGTH"]
    serve(app, host="127.0.0.1", port=8999, open_browser=False)
    assert "warning" not in capsys.readouterr().err


def test_serve_command_rejects_a_missing_file() -> None:
    from growthcore.cli import main

    assert main(["serve", "--data", "no_such_file.csv", "--no-browser"]) == 1


def test_serve_command_runs_waitress(tmp_path) -> None:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    data = tmp_path / "invented.csv"
    data.write_text("t,p\n0,1\n1,1.8\n2,3.1\n3,4.6\n4,5.9\n5,6.6\n", encoding="utf-8")
    proc = subprocess.Popen([sys.executable, "-m", "growthcore", "serve", "--data", str(data), "--port", str(port),
                             "--no-browser"], cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        for _ in range(100):
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/_dash-layout", timeout=1) as r:
                    headers, body = r.headers, r.read().decode()
                break
            except OSError:
                time.sleep(0.1)
        else:
            pytest.fail("the server did not answer")
        assert headers["Server"] == "growthcore"  # waitress's ident, not the Flask development server
        assert "invented.csv" in body
    finally:
        proc.terminate()
        out, err = proc.communicate(timeout=10)
    assert f"serving on http://127.0.0.1:{port}/" in out
    assert "warning" not in err
