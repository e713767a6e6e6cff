"""The shipped JSON Schema, our small validator and the integrity hash.

Reference: the ``jsonschema`` package (Draft 2020-12 validator) decides what is valid; our
validator must agree with it on every record the project writes and on broken variants of them.
"""

from __future__ import annotations

import copy
import hashlib
import json
import random
from collections.abc import Iterator
from typing import Any

import jsonschema
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from growthcore.record import CANONICAL_FORM, FORMAT_VERSION, canonical_json, content_hash, integrity_problem, seal
from growthcore.schemas import available_versions, record_errors, record_schema, validation_errors
from tests.record_cases import record_cases

SCHEMA = record_schema(FORMAT_VERSION)
REFERENCE = jsonschema.Draft202012Validator(SCHEMA)


def test_schema_is_valid_draft_2020_12() -> None:
    jsonschema.Draft202012Validator.check_schema(SCHEMA)
    assert available_versions() == (1, 2)
    assert "SHA-256" in SCHEMA["description"] and "sorted" in SCHEMA["description"]


@pytest.mark.parametrize("name", sorted(record_cases()))
def test_every_record_validates(name: str) -> None:
    record = record_cases()[name]
    REFERENCE.validate(record)
    assert record_errors(record, FORMAT_VERSION) == []
    assert integrity_problem(record) is None


def _leaves(obj: Any, path: tuple = ()) -> Iterator[tuple]:
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _leaves(v, (*path, k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _leaves(v, (*path, i))
    yield path


def _set(obj: Any, path: tuple, value: Any) -> None:
    for p in path[:-1]:
        obj = obj[p]
    obj[path[-1]] = value


def _delete(obj: Any, path: tuple) -> None:
    for p in path[:-1]:
        obj = obj[p]
    del obj[path[-1]]


REPLACEMENTS = ["text", "", -1, 0, 2.5, True, None, [], {}, [1, 2, 3], {"x": 1}, "ab" * 40, 1e300]


def test_validator_agrees_with_reference_on_mutations() -> None:
    """Replace or delete leaves of real records at random (seeded) and compare the verdicts."""
    rng = random.Random(20240607)
    disagreements = []
    invalid_seen = 0
    for record in record_cases().values():
        paths = [p for p in _leaves(record) if p]
        for _ in range(50):
            broken = copy.deepcopy(record)
            path = rng.choice(paths)
            if rng.random() < 0.25 and isinstance(path[-1], str):
                _delete(broken, path)
            else:
                _set(broken, path, copy.deepcopy(rng.choice(REPLACEMENTS)))
            ours = validation_errors(broken, SCHEMA) == []
            theirs = REFERENCE.is_valid(broken)
            invalid_seen += not theirs
            if ours != theirs:
                disagreements.append((path, ours, theirs))
    assert not disagreements, disagreements[:5]
    assert invalid_seen > 40  # the mutations do reach the checked parts


@pytest.mark.parametrize("path, value, words", [
    (("fits", 0, "method"), "fastest", "must be one of"),
    (("fits", 0, "metrics", "n"), 3.5, "expected integer"),
    (("fits", 0, "parameters", "r", "ci95"), [1.0, 2.0, 3.0], "at most 2"),
    (("data", "points", 0, "used"), "yes", "expected boolean"),
    (("data", "sha256"), "not-a-hash", "expected form"),
    (("format_version",), 1.5, "must be 2"),
    (("fits", 0, "request", "fixed"), {"K": "big"}, "expected number"),
])
def test_messages_name_the_place(path: tuple, value: Any, words: str) -> None:
    record = record_cases()["census-both-methods"]
    _set(record, path, value)
    errors = record_errors(record, FORMAT_VERSION)
    assert errors and words in errors[0]
    assert errors[0].startswith("record." + str(path[0]))
    assert not REFERENCE.is_valid(record)


def test_missing_and_unexpected_members_are_named() -> None:
    record = record_cases()["census-both-methods"]
    del record["data"]["points"][2]["reason"]
    record["data"]["points"][3]["colour"] = "red"
    errors = record_errors(record, FORMAT_VERSION)
    assert any("'reason' is missing" in e and "points[2]" in e for e in errors)
    assert any("unexpected member 'colour'" in e for e in errors)


def test_unsupported_schema_keyword_is_refused() -> None:
    with pytest.raises(ValueError, match="not supported"):
        validation_errors({}, {"type": "object", "oneOf": [{"type": "object"}]})


def _independent_hash(record: dict[str, Any]) -> str:
    """The recipe of the schema's description, written out again here."""
    def floats(x: Any) -> Any:
        if isinstance(x, bool) or x is None or isinstance(x, str):
            return x
        if isinstance(x, (int, float)):
            return float(x)
        if isinstance(x, dict):
            return {k: floats(v) for k, v in x.items()}
        return [floats(v) for v in x]

    body = floats({k: v for k, v in record.items() if k != "integrity"})
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def test_hash_follows_the_documented_recipe() -> None:
    record = record_cases()["algae-log-error-fixed-K"]
    assert record["integrity"] == {"algorithm": "sha256", "canonical": CANONICAL_FORM,
                                   "value": _independent_hash(record)}


def test_hash_ignores_layout_and_number_spelling() -> None:
    record = record_cases()["census-both-methods"]
    # Re-saving with other key order, indentation and 1994 for 1994.0 keeps the content.
    text = json.dumps(record, indent=4, sort_keys=False)
    respelled = json.loads(text.replace('"t": 1994.0', '"t": 1994'))
    assert respelled["data"]["points"][0]["t"] == 1994 and isinstance(respelled["data"]["points"][0]["t"], int)
    reordered = dict(reversed(list(respelled.items())))
    assert integrity_problem(reordered) is None


@settings(max_examples=40, deadline=None)
@given(st.integers(min_value=0, max_value=10_000), st.floats(allow_nan=False, allow_infinity=False))
def test_any_changed_number_breaks_the_hash(pick: int, value: float) -> None:
    record = record_cases()["tiny-with-failure"]
    numeric = [p for p in _leaves(record) if p and p[0] != "integrity"
               and isinstance(_get(record, p), float) and _get(record, p) != value]
    path = numeric[pick % len(numeric)]
    _set(record, path, value)
    problem = integrity_problem(record)
    assert problem is not None and "mismatch" in problem


def _get(obj: Any, path: tuple) -> Any:
    for p in path:
        obj = obj[p]
    return obj


def test_seal_makes_an_edited_record_sound_again() -> None:
    record = record_cases()["tiny-with-failure"]
    record["data"]["name"] = "renamed"
    assert integrity_problem(record) is not None
    seal(record)
    assert integrity_problem(record) is None
    assert record["integrity"]["value"] == content_hash(record)
    assert canonical_json({"b": 1, "a": [True, None, 2]}) == b'{"a":[true,null,2.0],"b":1.0}'
