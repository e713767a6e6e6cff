"""Any bytes given to the reader end in series with a report or in one clear ImportFailure."""

from __future__ import annotations

import io
import zipfile

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from growthcore.errors import ImportFailure
from growthcore.io import ImportResult, load_bytes

NAMES = st.sampled_from(["f.csv", "f.tsv", "f.txt", "f.xlsx", "f", "f.dat"])
CELL = st.one_of(
    st.text(alphabet="0123456789.,-:+eE ", max_size=8),
    st.sampled_from(["", "NA", "0:15:00", "36:00:00", "2024-03-31T01:30+01:00", "31.03.2024", "=1+2", "x"]),
    st.floats(allow_nan=True, allow_infinity=True).map(str),
)
TABLE = st.lists(st.lists(CELL, min_size=1, max_size=4), min_size=0, max_size=12)
SEP = st.sampled_from([",", ";", "\t"])


def _outcome(data: bytes, name: str) -> None:
    try:
        result = load_bytes(data, name, max_bytes=200_000)
    except ImportFailure as exc:
        message = str(exc)
        assert message and "\n" not in message
        return
    assert isinstance(result, ImportResult) and result.series
    result.report.to_text()
    for s in result.series:
        assert len(s) >= 3


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.binary(max_size=400), NAMES)
def test_any_bytes(data: bytes, name: str) -> None:
    _outcome(data, name)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(TABLE, SEP, st.sampled_from(["utf-8", "utf-16", "latin-1", "utf-8-sig"]))
def test_any_table_text(rows: list[list[str]], sep: str, encoding: str) -> None:
    text = "\n".join(sep.join(r) for r in rows)
    _outcome(text.encode(encoding, errors="replace"), "t.csv")


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.binary(max_size=300), st.sampled_from(["xl/workbook.xml", "[Content_Types].xml", "other"]))
def test_any_zip_named_xlsx(payload: bytes, member: str) -> None:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr(member, payload)
    data = buf.getvalue()
    _outcome(data, "w.xlsx")
    # and damaged copies of it
    _outcome(data[: len(data) // 2], "w.xlsx")
