"""Reading the uploaded (or demo) file into the chosen series, with the import report."""

from __future__ import annotations

import base64
import binascii
import dataclasses
from collections.abc import Mapping
from typing import Any

from dash import Dash, Input, Output, State, ctx, html, no_update

from growthcore.errors import ChoiceNotFound, GrowthcoreInputError, ImportFailure
from growthcore.io import load_bytes
from growthcore.io.sniff import OLE_SIGNATURE, ZIP_SIGNATURES
from growthcore.limits import DEFAULT as DEFAULT_LIMITS
from growthcore.limits import Limits

from .. import ids
from ..heavy import direct, runner_of
from ..state import data_to_store, limits_in
from .exclusions import update_exclusions

DEFAULT_MAX_BYTES = 10_000_000


def source_from_upload(contents: str, filename: str, max_bytes: int = DEFAULT_MAX_BYTES) -> dict[str, Any]:
    """The store form of an upload: dcc.Upload gives 'data:<type>;base64,<bytes>'."""
    _, _, b64 = contents.partition(",")
    return {"filename": filename or "upload", "b64": b64, "max_bytes": max_bytes}


def server_limits(app: Dash) -> Limits:
    """The limits of this server (its configuration, never the tab's state)."""
    return limits_in(app.server.config)


def decode_source(source: Mapping[str, Any], max_bytes: int | None = None) -> bytes:
    """The bytes of a stored upload; refused before decoding when they would pass ``max_bytes``."""
    b64 = source.get("b64") or ""
    name = source.get("filename", "upload")
    if not isinstance(b64, str):
        raise GrowthcoreInputError(f"{name}: the upload arrived damaged (not base64 text); try again")
    size = len(b64) * 3 // 4 - b64[-2:].count("=")
    if max_bytes is not None and size > max_bytes:
        raise ImportFailure(f"{name}: the file is {size:,} bytes, over the limit of {max_bytes:,} bytes; "
                            "split it or raise the limit (growthcore serve --max-upload-mb)")
    try:
        return base64.b64decode(b64, validate=True)
    except (binascii.Error, ValueError):
        raise GrowthcoreInputError(f"{source.get('filename', 'upload')}: the upload arrived damaged "
                                   "(not valid base64); try again") from None


#: A text file up to this size is read in the request's own thread, under the light-request budget: its
#: reading takes milliseconds and is bounded by the size the server checks first, while starting a worker
#: process takes 10 to 100 ms. Workbooks (compressed, so their size says little) and larger files are
#: read by a worker.
LIGHT_READ_BYTES = 256 * 1024


def is_light_read(source: Mapping[str, Any]) -> bool:
    """Whether ``source`` is a small text file (see :data:`LIGHT_READ_BYTES`)."""
    b64 = source.get("b64")
    if not isinstance(b64, str) or len(b64) * 3 // 4 > LIGHT_READ_BYTES:
        return False
    try:
        head = base64.b64decode(b64[:12], validate=True)
    except (binascii.Error, ValueError):
        return False  # damaged: the worker's read says so
    return bool(head) and not head.startswith((*ZIP_SIGNATURES, OLE_SIGNATURE))


def reader_for(source: Mapping[str, Any], run: Any) -> Any:
    """``run`` (a worker) for a file that is heavy to read, the calling thread for a small text file."""
    return direct if is_light_read(source) else run


def value_columns(text: str | None) -> str | list[str] | None:
    """The value field as the import takes it: one column, several separated by commas, or none."""
    return [v.strip() for v in text.split(",")] if text and "," in text else (text or None)


#: The import choices of the mapping fields, in the order of their outputs.
CHOICES = ("time", "value", "series_column", "time_unit", "sheet", "replicates")
#: The field each ``ChoiceNotFound.choice`` comes from.
_FIELD_OF = {"time": "time", "values": "value", "series": "series_column", "sheet": "sheet"}


def import_source(source: Mapping[str, Any], *, pick: str | None = None, time: str | None = None,
                  value: str | None = None, series_column: str | None = None, time_unit: str | None = None,
                  sheet: str | None = None, replicates: str | None = None, limits: Limits | None = None,
                  keep_what_fits: bool = False) -> dict[str, Any]:
    """Read ``source`` and return the store form of the chosen series (the first when ``pick`` is absent).

    ``limits`` are the server's (the byte limit included); a ``max_bytes`` in ``source`` is only
    what the tab was told and is never trusted. With ``keep_what_fits`` (a new file read with the
    choices made for the one before), a column or sheet the new file lacks is dropped from the
    choices instead of refusing the file; the store's ``dropped`` names each choice dropped.
    Raises ``GrowthcoreInputError`` (``ImportFailure``) with a one-line message naming the file.
    """
    limits = limits or dataclasses.replace(DEFAULT_LIMITS, max_bytes=DEFAULT_MAX_BYTES)
    raw = decode_source(source, limits.max_bytes)
    name = source.get("filename") or "upload"
    choices: dict[str, str | None] = {"time": time, "value": value, "series_column": series_column, "sheet": sheet}
    dropped: list[str] = []
    while True:
        try:
            imported = load_bytes(raw, name, sheet=choices["sheet"] or None, time=choices["time"] or None,
                                  value=value_columns(choices["value"]), series=choices["series_column"] or None,
                                  time_unit=time_unit or None, replicates=replicates or "all",
                                  max_bytes=limits.max_bytes, limits=limits)
            break
        except ChoiceNotFound as exc:
            field = _FIELD_OF.get(exc.choice)
            if not keep_what_fits or field is None or not choices.get(field):
                raise
            dropped.append(field)
            choices[field] = None
    chosen = next((s for s in imported.series if s.name == pick), imported.series[0])
    data = data_to_store(imported, chosen, source=name)
    data["dropped"] = dropped
    # the choices this read used, so that reading every series of the file repeats them exactly
    data["choices"] = {**choices, "time_unit": time_unit or None, "replicates": replicates or "all"}
    return data


def summary(data: Mapping[str, Any]) -> list[Any]:
    n = len(data["t"])
    rep = data["report"]
    left = len(rep.get("left_out", []))
    own = next((x for x in rep.get("series", []) if x.get("name") == data["name"]), {})
    lines = [
        html.Div([html.Strong(data["source"]), f" — series “{data['name']}”"]),
        html.Div(f"{n} points; time “{data['time_column']}” [{data['time_unit'] or 'no unit'}], "
                 f"value “{data['value_column']}” [{data['value_unit'] or 'no unit'}]"),
    ]
    conditions = own.get("conditions") or {}
    if conditions:
        lines.append(html.Div("; ".join(f"{c} = {v}" for c, v in conditions.items()), className="muted"))
    replicates = own.get("replicates") or {}
    if replicates.get("times"):
        lines.append(html.Div(f"replicates: {replicates['points']} points at {replicates['times']} repeated "
                              "time(s), all fitted (increments use the mean at each time)"
                              if rep.get("replicates", "all") == "all" else
                              f"replicates at {replicates['times']} time(s): {rep.get('replicates')} kept",
                              className="muted"))
    lines.append(html.Div(f"{data['step']}; {left} cell(s) left out at import (see the report)", className="muted"))
    return lines


def failure_message(text: str, previous: Mapping[str, Any] | None, *, retry: bool = False) -> html.Div:
    keep = f" The panels still show {previous['source']}." if previous else ""
    hint = (" Choose its columns under “Columns and units” and read it again, or drop the file once more."
            if retry else "")
    return html.Div([html.Strong("Not read. "), text, keep, hint], className="message message-error")


def on_import(contents: str | None, _apply: int, pick: str | None, filename: str | None,
              source: Mapping[str, Any] | None, previous: Mapping[str, Any] | None, time: str | None,
              value: str | None, series_column: str | None, time_unit: str | None, sheet: str | None,
              replicates: str | None = None, *, trigger: str | None, max_bytes: int = DEFAULT_MAX_BYTES,
              limits: Limits | None = None, run: Any = direct) -> tuple[Any, ...]:
    """Outputs: source, data, message, summary, report, series options, series value, column list (the
    options and the columns left as they are for another series of the same file),
    the six mapping fields, and the upload's contents (cleared, so that the same file can be read again).

    A new upload becomes the file the mapping fields apply to, even when it cannot be read, and is
    read with the choices already made wherever the new file has those columns.
    """
    new_upload = trigger == ids.UPLOAD and contents is not None
    mapping = dict(time=time, value=value, series_column=series_column, time_unit=time_unit, sheet=sheet,
                   replicates=replicates)
    keep = (no_update,) * len(CHOICES)
    reset = None if new_upload else no_update
    if new_upload:
        source = source_from_upload(contents, filename or "upload", max_bytes)
    if not source:
        return (no_update, no_update, html.Div("Drop a file to start.", className="message"), no_update,
                no_update, no_update, no_update, no_update, *keep, reset)
    stored = source if new_upload else no_update
    keep_pick = pick if trigger == ids.SERIES_PICK or (trigger == ids.MAP_APPLY and pick) else None
    try:
        limits = limits or dataclasses.replace(DEFAULT_LIMITS, max_bytes=max_bytes)
        data = reader_for(source, run)("reading the file", import_source, source, pick=keep_pick, limits=limits,
                                       keep_what_fits=new_upload, **mapping)
    except GrowthcoreInputError as exc:
        message = str(exc).splitlines()[0]
        retry = bool(new_upload or trigger == ids.MAP_APPLY)
        return (stored, no_update, failure_message(message, previous, retry=retry),
                no_update, no_update, no_update, no_update, no_update, *keep, reset)
    names = data["series_names"]
    # every column of the file, so that the mapping fields can offer the ones the import did not pick
    columns = data["report"].get("columns") or sorted({data["time_column"], data["value_column"]})
    cleared = tuple(None if c in data["dropped"] else no_update for c in CHOICES)
    lines: list[Any] = [f"Read {data['source']}: {len(names)} series."]
    if data["dropped"]:
        shown = ", ".join(f"{_LABELS[c]} {mapping[c]!r}" for c in data["dropped"])
        lines.append(f" Not in this file, so read as guessed: {shown}.")
    ok = html.Div(lines, className="message message-ok")
    # another series of the same file: its series and columns are those on the page already (sent again,
    # the page would build the menu and the column list anew)
    same_file = trigger == ids.SERIES_PICK
    return (stored, data, ok, summary(data), data["report_text"],
            no_update if same_file else [{"label": n, "value": n} for n in names], data["name"],
            no_update if same_file else [html.Option(value=c) for c in columns], *cleared, reset)


#: How the mapping fields are named on the page, for messages.
_LABELS = {"time": "time column", "value": "value column", "series_column": "series id column",
           "time_unit": "time unit", "sheet": "worksheet", "replicates": "replicates"}


def refused_message(refused: Mapping[str, Any] | None, previous: Mapping[str, Any] | None,
                    max_bytes: int) -> html.Div | Any:
    """The message for a file the browser refused to send because it is far over the limit."""
    if not refused or "name" not in refused:
        return no_update
    size = int(refused.get("size") or 0)
    return failure_message(f"{refused['name']}: the file is {size:,} bytes, over the limit of {max_bytes:,} bytes; "
                           "split it or raise the limit (growthcore serve --max-upload-mb)", previous)


def exclusions_for(data: Any, current: Mapping[str, Any] | None) -> Any:
    """The exclusions that go with new data in the same reply: none for another series or file, the
    current ones when the key is the same (``no_update`` when nothing changes)."""
    if not isinstance(data, Mapping):
        return no_update
    fresh = update_exclusions(ids.DATA, current, data)
    return no_update if fresh is None else fresh


def register(app: Dash) -> None:
    max_bytes = int(app.server.config.get("GROWTHCORE_MAX_UPLOAD", DEFAULT_MAX_BYTES))
    limits = dataclasses.replace(server_limits(app), max_bytes=max_bytes)
    run = runner_of(app)

    @app.callback(
        Output(ids.DATA_MESSAGE, "children", allow_duplicate=True),
        Input(ids.UPLOAD_REFUSED, "data"), State(ids.DATA, "data"),
        prevent_initial_call=True,
    )
    def _refused(refused, previous):
        return refused_message(refused, previous, max_bytes)

    @app.callback(
        Output(ids.SOURCE, "data"), Output(ids.DATA, "data"), Output(ids.DATA_MESSAGE, "children"),
        Output(ids.DATA_SUMMARY, "children"), Output(ids.REPORT, "children"),
        Output(ids.SERIES_PICK, "options"), Output(ids.SERIES_PICK, "value"), Output(ids.MAP_COLUMNS, "children"),
        Output(ids.MAP_TIME, "value"), Output(ids.MAP_VALUE, "value"), Output(ids.MAP_SERIES, "value"),
        Output(ids.MAP_TIME_UNIT, "value"), Output(ids.MAP_SHEET, "value"), Output(ids.MAP_REPLICATES, "value"),
        Output(ids.UPLOAD, "contents"), Output(ids.EXCLUSIONS, "data", allow_duplicate=True),
        Input(ids.UPLOAD, "contents"), Input(ids.MAP_APPLY, "n_clicks"), Input(ids.SERIES_PICK, "value"),
        State(ids.UPLOAD, "filename"), State(ids.SOURCE, "data"), State(ids.DATA, "data"),
        State(ids.MAP_TIME, "value"), State(ids.MAP_VALUE, "value"), State(ids.MAP_SERIES, "value"),
        State(ids.MAP_TIME_UNIT, "value"), State(ids.MAP_SHEET, "value"), State(ids.MAP_REPLICATES, "value"),
        State(ids.EXCLUSIONS, "data"),
        prevent_initial_call="initial_duplicate",
    )
    def _import(contents, apply, pick, filename, source, previous, time, value, series_column, time_unit, sheet,
                replicates, exclusions):
        previous_pick = previous.get("name") if previous else None
        if ctx.triggered_id == ids.SERIES_PICK and pick == previous_pick:
            return (no_update,) * 16
        if ctx.triggered_id == ids.UPLOAD and contents is None:
            return (no_update,) * 16  # the contents cleared after the last read
        out = on_import(contents, apply, pick, filename, source, previous, time, value, series_column,
                        time_unit, sheet, replicates, trigger=ctx.triggered_id, max_bytes=max_bytes, limits=limits,
                        run=run)
        return (*out, exclusions_for(out[1], exclusions))
