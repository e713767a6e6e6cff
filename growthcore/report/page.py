"""The self-contained HTML report of a fit record: interactive figures, tables and the record itself.

Everything is inline (plotly.js, the figures, the record JSON), so the file opens from disk with no
server and no network.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from typing import Any

from growthcore.report.panels import esc, label, panel_figures, sheet_heading

CAUTION = ("Forecasts and derived times from a fitted growth law can be badly wrong outside the observed range. "
           "Where they could steer a safety decision (food shelf life, pathogen growth, harvest quotas, outbreak "
           "sizing), use validated methods, follow local regulations and consult qualified professionals.")
#: The report's own policy: inline scripts and styles only, nothing fetched.
_CSP = ("default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; style-src 'unsafe-inline'; "
        "img-src data: blob:; font-src data:")
_CSS = """
body{font-family:Helvetica Neue,Arial,sans-serif;color:#1f2a30;margin:24px auto;max-width:1100px;padding:0 16px}
h1{font-size:22px}h2{font-size:17px;margin-top:28px;border-bottom:1px solid #e3e7ea}
table{border-collapse:collapse;font-size:13px;margin:8px 0}
td,th{border:1px solid #e3e7ea;padding:3px 8px;text-align:left}
th{background:#f3f5f6}.panel{width:100%;height:480px}.table-panel{width:100%;height:360px}
.caution{background:#fff6e5;border-left:4px solid #E69F00;padding:8px 12px}.muted{color:#6b7780;font-size:12px}
code{font-size:12px}
"""


def _json_for_script(obj: Any) -> str:
    """JSON that cannot close its <script> element early."""
    text = json.dumps(obj, ensure_ascii=False, allow_nan=False, default=_plain)
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def _plain(obj: Any) -> Any:
    if hasattr(obj, "tolist"):
        return obj.tolist()
    raise TypeError(f"{type(obj).__name__} is not JSON")


def _fmt(v: Any) -> str:
    if v is None:
        return "–"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        return f"{v:.6g}" if math.isfinite(v) else "–"
    return esc(v)


def _table(header: list[str], rows: list[list[Any]]) -> str:
    head = "".join(f"<th>{esc(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{_fmt(c)}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _fit_details(f: Mapping[str, Any]) -> str:
    parts = [f"<h3>{esc(label(f))}: {esc(f['status'])}</h3>", f"<p>{esc(f.get('equation') or '')}</p>",
             f"<p class='muted'>{esc(f['message'])}</p>"]
    if f.get("notes"):
        parts.append("<ul>" + "".join(f"<li>{esc(n)}</li>" for n in f["notes"]) + "</ul>")
    derived = f.get("derived") or {}
    rows = [[k.replace("_", " "), v] for k, v in derived.items() if not isinstance(v, (list, dict))]
    for e in derived.get("equilibria", []) or []:
        slope = (f"rate slope F'(p*) {_fmt(e.get('rate_slope'))}" if "rate_slope" in e
                 else f"multiplier {_fmt(e.get('multiplier'))}")
        rows.append([f"equilibrium {e['value']:.6g}", f"{slope}, {'stable' if e.get('stable') else 'unstable'}"
                     + (f" ({esc(e['rule'])})" if e.get("rule") else "")])
    if rows:
        parts.append(_table(["derived quantity", "value"], rows))
    diag = f.get("diagnostics")
    if diag:
        parts.append(f"<p>Residual checks: Durbin–Watson {_fmt(diag.get('durbin_watson'))}, "
                     f"runs {diag.get('runs')} (expected {_fmt(diag.get('runs_expected'))}, "
                     f"p = {_fmt(diag.get('runs_p'))}): "
                     f"{esc(diag.get('message', ''))}</p>")
    return "\n".join(parts)


def _import_section(data: Mapping[str, Any]) -> str:
    rep = data.get("import_report")
    points = data["points"]
    left = [[p.get("row", i + 1), p["t"], p["p"], p["reason"]] for i, p in enumerate(points) if not p["used"]]
    out = [f"<p>Time: {esc(data['time']['column'])} [{esc(data['time']['unit'] or 'no unit')}]; "
           f"value: {esc(data['value']['column'])} [{esc(data['value']['unit'] or 'no unit')}]; "
           f"{esc(data.get('step', ''))}.</p>"]
    if left:
        out.append("<p>Points left out of the fits:</p>" + _table(["row", "t", "p", "reason"], left))
    if rep:
        out.append(f"<p class='muted'>Read {rep.get('rows_read')} rows from {esc(rep.get('source'))} "
                   f"({esc(rep.get('format', ''))}, layout {esc(rep.get('layout', ''))}).</p>")
        if rep.get("left_out"):
            out.append("<p>Cells left out at import:</p>" + _table(
                ["row", "column", "value", "reason"],
                [[x["row"], x["column"], x["value"], x["reason"]] for x in rep["left_out"]]))
        if rep.get("notes"):
            out.append("<ul>" + "".join(f"<li>{esc(n)}</li>" for n in rep["notes"]) + "</ul>")
    return "\n".join(out)


def report_html(record: Mapping[str, Any], *, plotlyjs: str | None = None,
                view: Mapping[str, Any] | None = None) -> str:
    """The whole report page as text. ``plotlyjs`` replaces the bundled plotly.js (for tests);
    ``view`` draws the figures as the screen does (see :func:`growthcore.report.panels.app_panels`)."""
    if plotlyjs is None:
        from plotly.offline import get_plotlyjs

        plotlyjs = get_plotlyjs()
    figures = panel_figures(record, view=view)
    data = record["data"]
    config = {"displaylogo": False, "responsive": True}
    divs, calls = {}, []
    for name, fig in figures.items():
        cls = "table-panel" if fig["data"] and fig["data"][0].get("type") == "table" else "panel"
        divs[name] = f'<div id="panel-{name}" class="{cls}" data-panel="{name}"></div>'
        calls.append(f"draw('panel-{name}', {_json_for_script(fig)});")

    def show(*names: str) -> str:
        return "\n".join(divs[n] for n in names if n in divs)

    fits = "\n".join(_fit_details(f) for f in record["fits"])
    settings_rows = [[k, json.dumps(v, ensure_ascii=False)] for k, v in (record.get("settings") or {}).items()]
    request_rows = [[label(f), json.dumps(f.get("request", {}), ensure_ascii=False)] for f in record["fits"]]
    sw = record.get("software", {})
    deps = ", ".join(f"{esc(k)} {esc(v)}" for k, v in (sw.get("dependencies") or {}).items() if v)
    integrity = (record.get("integrity") or {}).get("value", "")
    title = f"{esc(data.get('name', 'series'))}: fit report"
    notes = record.get("comparison", {}).get("notes", [])
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="{_CSP}">
<title>{title}</title><style>{_CSS}</style>
<script>{plotlyjs}</script></head>
<body>
<h1>{title}</h1>
<p>{sheet_heading(record).split('<br>', 1)[1]}</p>
<p class="caution">{esc(CAUTION)}</p>
<h2>Data</h2>
{_import_section(data)}
{show("data")}
<h2>Residuals</h2>
{show("residuals", "residuals-fitted", "observed-predicted")}
<h2>Comparison</h2>
{''.join(f'<p>{esc(n)}</p>' for n in notes)}
{show("comparison", "parameters")}
{('<h2>Profile of the carrying capacity</h2>' + show("profile")) if "profile" in divs else ''}
<h2>Each fit</h2>
{fits}
<h2>Settings</h2>
{_table(['setting', 'value'], settings_rows)}
{_table(['fit', 'arguments that reproduce it'], request_rows)}
<p class="muted">Software: {esc(sw.get('name', ''))} {esc(sw.get('version', ''))},
Python {esc(sw.get('python', ''))}; {deps}.
Record integrity (SHA-256 of its canonical JSON): <code>{esc(integrity)}</code>.
<a id="record-download" download="fit-record.json" href="#">Save the fit record (JSON)</a></p>
<script type="application/json" id="fit-record">{_json_for_script(record)}</script>
<script>
function draw(id, fig) {{ Plotly.newPlot(id, fig.data, fig.layout, {_json_for_script(config)}); }}
{chr(10).join(calls)}
(function () {{
  var text = document.getElementById('fit-record').textContent;
  var link = document.getElementById('record-download');
  link.href = URL.createObjectURL(new Blob([text], {{type: 'application/json'}}));
}})();
</script>
</body></html>
"""
