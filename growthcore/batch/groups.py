"""Replicate groups: from condition columns of the file, or from a pattern on the series ids."""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from growthcore.batch.pattern import MAX_PATTERN, compile_pattern
from growthcore.errors import GrowthcoreInputError
from growthcore.io.report import ImportReport


def groups_from_pattern(names: Sequence[str], pattern: str, *,
                        max_length: int = MAX_PATTERN) -> tuple[dict[str, str], tuple[str, ...]]:
    """Group label of each series id from a regular expression searched in the id.

    The label is the named group ``group`` when the pattern has one, else the first group, else
    the whole match: ``^(.*)_rep\\d+$`` puts ``ctrl_rep1`` and ``ctrl_rep2`` in group ``ctrl``.
    Ids the pattern does not match are in no group; the notes name them. The pattern language is
    the safe subset of :mod:`growthcore.batch.pattern`, matched in time linear in each id.
    """
    rx = compile_pattern(pattern, max_length=max_length)
    out: dict[str, str] = {}
    missed: list[str] = []
    for name in names:
        m = rx.search(name)
        if m is None:
            missed.append(name)
            continue
        if "group" in rx.groupindex:
            label = m.group(rx.groupindex["group"])
        elif rx.groups:
            label = m.group(1)
        else:
            label = m.group(0)
        if label is None or label == "":
            missed.append(name)
        else:
            out[name] = label
    notes: tuple[str, ...] = ()
    if missed:
        shown = ", ".join(missed[:10]) + (" ..." if len(missed) > 10 else "")
        notes = (f"{len(missed)} series do not match the pattern {pattern!r} and are in no group: {shown}",)
    return out, notes


def condition_columns(wanted: str | Sequence[str]) -> tuple[str, ...]:
    """``"Year,Variety"`` or ``["Year", "Variety"]`` -> ``("Year", "Variety")``."""
    parts = wanted.split(",") if isinstance(wanted, str) else list(wanted)
    return tuple(p.strip() for p in parts if p.strip())


def groups_from_conditions(report: ImportReport, wanted: str | Sequence[str]) -> tuple[dict[str, str], tuple[str, ...]]:
    """Group label of each series from one or more of its condition columns (``1988 × F``).

    The conditions are the columns the import found constant within every series of a long file;
    a column that varies within a series cannot group series, and the error names the conditions.
    """
    columns = condition_columns(wanted)
    if not columns:
        raise GrowthcoreInputError("name at least one condition column to group the series by")
    offered = report.columns_with("condition") + report.columns_with("covariate")
    lower = {c.lower(): c for c in offered}
    chosen = []
    for col in columns:
        match = lower.get(col.lower())
        if match is None:
            if not report.columns_with("id"):
                raise GrowthcoreInputError(
                    f"{report.source}: grouping by a column needs a long file with a series id column; this file "
                    "has one column per series (wide layout): group the series by a pattern on their names instead")
            where = (f"the conditions are {', '.join(repr(c) for c in offered)}" if offered
                     else "the file has no conditions")
            known = {c.lower() for c in (*report.columns, *(r.column for r in report.roles))}
            what = "is not a condition (a column constant within every series)" if col.lower() in known else \
                "is not in the file"
            raise GrowthcoreInputError(f"{report.source}: no column {col!r} to group by: it {what}; {where}")
        chosen.append(match)
    out: dict[str, str] = {}
    for s in report.series:
        found = dict(s.conditions)
        if all(c in found for c in chosen):
            out[s.name] = " × ".join(found[c] for c in chosen)
    return out, ()


def members(groups: Mapping[str, str], names: Sequence[str]) -> dict[str, list[str]]:
    """Series ids per group label, in the order of ``names``."""
    out: dict[str, list[str]] = {}
    for n in names:
        if n in groups:
            out.setdefault(groups[n], []).append(n)
    return out
