"""Hypothesis-generated malformed sequences: every one is accepted or refused with
FILE:LINE:COLUMN, never a traceback."""

from __future__ import annotations

import copy
from pathlib import Path
from typing import Any

import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from harness.common.errors import InputError
from harness.runner.prepare import RunOptions, prepare

ROOT = Path(__file__).resolve().parents[2]
BASE = yaml.safe_load((ROOT / "sequences" / "routine_single_phase.yaml").read_text())

junk = st.one_of(st.none(), st.booleans(), st.integers(-10**6, 10**6), st.floats(allow_nan=True),
                 st.text(max_size=12), st.sampled_from(["rated", "110 %", "-5 V", "7 A", "1e999 V", "nan", "", "[]"]),
                 st.lists(st.integers(), max_size=3), st.dictionaries(st.text(max_size=5), st.integers(), max_size=2))


def paths(node: Any, prefix: tuple = ()) -> list[tuple]:
    out = [prefix]
    if isinstance(node, dict):
        for k, v in node.items():
            out += paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out += paths(v, prefix + (i,))
    return out


ALL_PATHS = [p for p in paths(BASE) if p]


def mutate(doc: Any, path: tuple, action: str, value: Any) -> Any:
    doc = copy.deepcopy(doc)
    parent = doc
    for part in path[:-1]:
        parent = parent[part]
    last = path[-1]
    if action == "delete":
        del parent[last]
    elif action == "replace":
        parent[last] = value
    elif isinstance(parent, dict):
        parent[f"extra_{action}"] = value
    else:
        parent.insert(last, value)
    return doc


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(mutations=st.lists(st.tuples(st.sampled_from(ALL_PATHS), st.sampled_from(["delete", "replace", "insert"]), junk),
                          min_size=1, max_size=3))
def test_malformed_sequences_never_raise_a_traceback(tmp_path: Path, mutations: list) -> None:
    doc = BASE
    for path, action, value in mutations:
        try:
            doc = mutate(doc, path, action, value)
        except (KeyError, IndexError, TypeError, AttributeError):
            continue  # an earlier mutation removed the place
    target = tmp_path / "mutated.yaml"
    target.write_text(yaml.safe_dump(doc, allow_unicode=True), encoding="utf-8")
    try:
        prepare(RunOptions(target))
    except InputError as err:
        text = str(err)
        assert text.startswith(f"{target}:"), text
        first = text.splitlines()[0].split(":")
        assert first[1].isdigit() and first[2].isdigit(), text


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(text=st.text(alphabet=st.sampled_from(list("abc:-[]{}'\"\n #&*!|>%@`,?1.")), max_size=80))
def test_garbage_text_is_refused_with_a_position(tmp_path: Path, text: str) -> None:
    target = tmp_path / "garbage.yaml"
    target.write_text(text, encoding="utf-8")
    try:
        prepare(RunOptions(target))
    except InputError as err:
        assert str(err).startswith(f"{target}:")
