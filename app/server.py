"""The app factory and the production server (waitress; never the Flask development server)."""

from __future__ import annotations

import base64
import dataclasses
import gc
import ipaddress
import logging
import os
import socket
import sys
import threading
import traceback
import webbrowser
from collections.abc import Iterable
from typing import Any

from dash import Dash, Input, Output, set_props
from flask import Response, request

from growthcore.budget import BudgetExceeded
from growthcore.limits import DEFAULT as DEFAULT_LIMITS
from growthcore.limits import Limits

from . import ids
from .callbacks import register_all
from .callbacks.export import record_upload_chars
from .heavy import HeavyConfig, HeavyRunner
from .layout import build_layout
from .request_budget import CONFIG_KEY as LIGHT_BUDGET_KEY
from .request_budget import DEFAULT_LIGHT_BUDGET_S, check_light_budget, describe_request, show_ran_out

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
ASSETS = os.path.join(ROOT, "assets")
DEMO_FILE = os.path.join(ROOT, "sample_data", "algae_photobioreactor.csv")
DEFAULT_MAX_UPLOAD = 10_000_000
DEFAULT_THREADS = 8
#: Host names a loopback server answers to (a page elsewhere cannot reach it by DNS rebinding).
LOOPBACK_NAMES = ("127.0.0.1", "localhost", "::1")
LOG = logging.getLogger("growthcore.app")

INDEX = """<!DOCTYPE html>
<html lang="en">
<head>{%metas%}<title>{%title%}</title>{%favicon%}{%css%}</head>
<body>
<noscript>This page needs JavaScript to draw its panels.</noscript>
{%app_entry%}
<footer>{%config%}{%scripts%}{%renderer%}</footer>
</body>
</html>"""


def read_source(path: str, max_bytes: int = DEFAULT_MAX_UPLOAD) -> dict[str, Any]:
    """A file on disk in the same form as an upload, for the first screen."""
    with open(path, "rb") as fh:
        raw = fh.read(max_bytes + 1)
    return {"filename": os.path.basename(path), "b64": base64.b64encode(raw).decode("ascii"), "max_bytes": max_bytes}


def _report_failure(err: Exception) -> None:
    """Any unexpected failure in a callback: our message on screen, the traceback in the server log."""
    if isinstance(err, BudgetExceeded):  # a callback registered outside register_all ran out of time
        show_ran_out(err.what, err.seconds, describe_request((), {})[1])
        return
    LOG.error("callback failed:\n%s", "".join(traceback.format_exception(err)))
    first = (str(err).splitlines() or [""])[0][:300]
    set_props(ids.ERROR_BANNER, {"hidden": False})
    set_props(ids.ERROR_TEXT, {"children": (
        f"Something went wrong while updating the screen ({type(err).__name__}: {first}). The last good "
        "results stay on screen; change a setting to try again. The server log has the details.")})


def create_app(data_path: str | None = None, *, max_upload_bytes: int = DEFAULT_MAX_UPLOAD,
               demo: bool = True, limits: Limits | None = None, heavy: HeavyConfig | None = None,
               allowed_hosts: Iterable[str] = LOOPBACK_NAMES,
               light_budget_s: float | None = DEFAULT_LIGHT_BUDGET_S) -> Dash:
    """A new app; ``data_path`` is the file shown first (the invented demo data when None).

    Every app keeps its state in the browser (dcc.Store), so one server serves many tabs, each
    with its own data. Every limit (``limits``, with ``max_upload_bytes`` as its byte limit) is
    the server's own and checked on the server, whatever the tab sends; heavy jobs run as
    ``heavy`` says (worker processes, a bound on how many at once, a time budget). Every other
    callback may take ``light_budget_s`` seconds of work in the request's thread (None: no limit).
    """
    path = data_path or (DEMO_FILE if demo and os.path.exists(DEMO_FILE) else None)
    source = read_source(path, max_upload_bytes) if path else None
    app = Dash(
        __name__,
        assets_folder=ASSETS,
        title="growthcore — rate-law exploration",
        update_title=None,
        serve_locally=True,
        on_error=_report_failure,
    )
    app.index_string = INDEX
    # never debug: our own messages instead of the framework's overlay, and no calls to outside hosts
    app.enable_dev_tools(debug=False, dev_tools_ui=False, dev_tools_props_check=False, dev_tools_hot_reload=False,
                         dev_tools_serve_dev_bundles=False, dev_tools_disable_version_check=True,
                         dev_tools_prune_errors=True, dev_tools_validate_callbacks=False,
                         dev_tools_silence_routes_logging=True)
    # the browser sends files up to twice the limit (so that the server can say why it refuses them);
    # base64 inflates by 4/3, and the import request also carries the previous file and series
    # a reopened record is as large as the record limit allows (base64 again)
    record_upload = record_upload_chars(limits or DEFAULT_LIMITS)
    app.server.config["MAX_CONTENT_LENGTH"] = max(5 * max_upload_bytes, record_upload) + 2_000_000
    app.server.config["GROWTHCORE_MAX_UPLOAD"] = max_upload_bytes
    app.server.config["GROWTHCORE_LIMITS"] = dataclasses.replace(limits or DEFAULT_LIMITS, max_bytes=max_upload_bytes)
    app.server.config["GROWTHCORE_HEAVY"] = HeavyRunner(heavy)
    app.server.config[LIGHT_BUDGET_KEY] = check_light_budget(light_budget_s)
    app.server.config["GROWTHCORE_ALLOWED_HOSTS"] = frozenset(_host_key(h) for h in allowed_hosts)
    app.layout = build_layout(source, max_upload_bytes=max_upload_bytes)
    register_all(app)
    app.callback(Output(ids.ERROR_BANNER, "hidden", allow_duplicate=True), Input(ids.ERROR_DISMISS, "n_clicks"),
                 prevent_initial_call=True)(lambda _n: True)
    _error_pages(app)
    _guard(app)
    return app


def _host_key(host: str) -> str:
    """A Host header or name without its port and brackets, in lower case."""
    host = host.strip().lower()
    if host.startswith("["):
        return host[1:].split("]", 1)[0]
    if host.count(":") == 1:
        host = host.split(":", 1)[0]
    return host.rstrip(".")


def allowed_hosts_for(host: str) -> frozenset[str]:
    """The names a server bound to ``host`` answers to: the loopback names, and ``host`` itself;
    for a wildcard address, also this machine's names."""
    names = set(LOOPBACK_NAMES)
    if host in ("0.0.0.0", "::", ""):
        names.update({socket.gethostname(), socket.getfqdn()})
        try:
            names.update(socket.gethostbyname_ex(socket.gethostname())[2])
        except OSError:
            pass
    else:
        names.add(host)
    return frozenset(_host_key(n) for n in names if n)


def security_policy(app: Dash) -> str:
    """The Content-Security-Policy: scripts from this server only (and the framework's own inline
    scripts, by hash), no plugins, no framing, requests only to this server."""
    scripts = " ".join(["'self'", *app.csp_hashes()])
    return ("default-src 'self'; "
            f"script-src {scripts}; "
            "style-src 'self' 'unsafe-inline'; "  # the components set style attributes
            "img-src 'self' data: blob:; font-src 'self' data:; connect-src 'self'; "
            "object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'")


def _guard(app: Dash) -> None:
    """Host-header allow-list before every request; security headers on every answer."""
    server = app.server
    policy: dict[str, str] = {}

    @server.before_request
    def _check_host() -> Response | None:
        allowed = server.config["GROWTHCORE_ALLOWED_HOSTS"]
        if _host_key(request.host or "") not in allowed:
            names = ", ".join(sorted(allowed))
            return Response(f"growthcore: this server answers only to the host names {names}; the request named "
                            f"{(request.host or '')[:80]!r}.", status=421, mimetype="text/plain")
        return None

    @server.after_request
    def _headers(response: Response) -> Response:
        if "csp" not in policy:
            policy["csp"] = security_policy(app)  # after every callback (and inline script) is defined
        response.headers["Content-Security-Policy"] = policy["csp"]
        response.headers["X-Frame-Options"] = "DENY"
        response.headers["X-Content-Type-Options"] = "nosniff"
        response.headers["Referrer-Policy"] = "no-referrer"
        response.headers["Cross-Origin-Opener-Policy"] = "same-origin"
        return response


def _error_pages(app: Dash) -> None:
    server = app.server

    @server.errorhandler(413)
    def _too_large(_err: Exception) -> Response:
        limit = server.config["GROWTHCORE_MAX_UPLOAD"] / 1_000_000
        return Response(f"growthcore: the request is too large; files up to {limit:g} MB can be loaded.",
                        status=413, mimetype="text/plain")

    @server.errorhandler(404)
    def _not_found(_err: Exception) -> Response:
        return Response("growthcore: no such page. The app is at /.", status=404, mimetype="text/plain")

    @server.errorhandler(Exception)
    def _failure(err: Exception) -> Response:
        code = getattr(err, "code", 500)
        if not isinstance(code, int) or code < 400:
            code = 500
        if code >= 500:
            LOG.error("request failed:\n%s", "".join(traceback.format_exception(err)))
        return Response(f"growthcore: the server could not answer this request ({type(err).__name__}). "
                        "Reload the page; the server log has the details.", status=code, mimetype="text/plain")


def is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def freeze_startup_heap() -> None:
    """Move everything built so far (the modules, the app) out of the cyclic garbage collector's sight.

    These objects live as long as the process. Left in the collector's oldest generation, each full
    collection walks all of them: a pause of about 70 ms inside whichever request set it off (one in
    six series switches on these machines). Afterwards a full collection walks what requests made.
    """
    gc.collect()
    gc.freeze()


def serve(app: Dash, *, host: str = "127.0.0.1", port: int = 8050, open_browser: bool = True,
          threads: int = DEFAULT_THREADS) -> None:
    """Serve with waitress until interrupted; warn when the address is reachable from the network.

    The server answers only to the loopback names and ``host``. It needs more threads than heavy
    jobs may hold (those running and those waiting for a slot), so that light requests are
    answered however many heavy ones arrive.
    """
    from waitress import serve as waitress_serve

    heavy = app.server.config["GROWTHCORE_HEAVY"].config
    if threads <= heavy.slots + heavy.queue:
        raise ValueError(f"serve needs more than {heavy.slots + heavy.queue} threads (the heavy jobs running and "
                         f"waiting) so that light requests are answered; got {threads}")
    app.server.config["GROWTHCORE_ALLOWED_HOSTS"] = allowed_hosts_for(host)
    app.server.config["GROWTHCORE_HEAVY"].warm()

    url = f"http://{'127.0.0.1' if host in ('0.0.0.0', '::') else host}:{port}/"
    if not is_loopback(host):
        print(f"warning: serving on {host}: anyone who can reach this machine on that network can open the app "
              "and see the data loaded into it", file=sys.stderr)
    print(f"growthcore: serving on {url} (Ctrl+C to stop)")
    if open_browser:
        threading.Timer(1.0, lambda: webbrowser.open(url)).start()
    limit = int(app.server.config["MAX_CONTENT_LENGTH"])
    freeze_startup_heap()
    waitress_serve(app.server, host=host, port=port, threads=threads, max_request_body_size=limit,
                   ident="growthcore")
