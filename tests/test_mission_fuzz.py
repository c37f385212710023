"""Property tests: whatever document the loader is given, it returns a Mission or raises the
project's own error (PropulsionError), never another exception.

Documents start from the example missions and are mutated (keys deleted, renamed with a typo,
leaf values replaced, stages duplicated, legs shuffled), or are random nested tables.

Integers far beyond the 64-bit range (tomllib reads any size) and file names longer than
the file system allows are included: both once crashed the loader.
"""

from __future__ import annotations

import copy
import json
import re
import shutil
import tomllib
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from propulsion.errors import PropulsionError
from propulsion.mission import Mission, parse_mission

MISSIONS_DIR = Path(__file__).resolve().parent.parent / "missions"
EXAMPLES: dict[str, dict[str, Any]] = {
    path.stem: tomllib.loads(path.read_text(encoding="utf-8"))
    for path in sorted(MISSIONS_DIR.glob("*.toml"))
}

FUZZ = settings(max_examples=200, deadline=None)

# --- values ---------------------------------------------------------------------------------

UNIT_TEXTS = [
    "3 kg",
    "-1 m",
    "1e400 s",
    "nan",
    "inf",
    "9**99 kg",
    "9**9**9 kg",
    "1 kg**99",
    "0 kg",
    "0.5",
    "5 %",
    "150 %",
    "85 deg",
    "-90 deg",
    "1200 lbf",
    "40 kN",
    "280 s",
    "1 ms",
    "150 m/s",
    "1.5 km/s",
    "200 km",
    "1e20 kg",
    "1e-300 kg",
    "0.45 m^2",
    "12 in**2",
    "2.4",
    "",
    " ",
    "kg",
    "3 flurbs",
    "1 (kg",
    "pd-H113",
    "pd-G58",
    "slender_finned",
    "lox_kerosene",
    "booster",
    "core",
    "upper",
    "sustainer",
    "apogee",
    "delta_v",
    "circular_orbit",
    "hohmann",
    "plane_change",
]

NUMBERS = st.one_of(
    st.integers(min_value=-(2**63), max_value=2**63 - 1),
    st.integers(min_value=10**300, max_value=10**400),
    st.text(alphabet="abc", min_size=256, max_size=300),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0, 1, -1, 0.5, 1.0, 1e-300, 5e-324, 1e308, 64, 65]),
)
TEXT = st.text(max_size=40)
SCALARS = st.one_of(st.sampled_from(UNIT_TEXTS), TEXT, NUMBERS, st.booleans())
KEYS = st.one_of(
    st.sampled_from(
        [
            "name",
            "payload",
            "diameter",
            "inert_mass",
            "propellant_mass",
            "motor",
            "engine",
            "stage",
            "leg",
            "stages",
            "target",
            "count",
            "file",
        ]
    ),
    st.text(max_size=12),
)
VALUES = st.recursive(
    SCALARS,
    lambda children: st.one_of(
        st.lists(children, max_size=4), st.dictionaries(KEYS, children, max_size=4)
    ),
    max_leaves=12,
)

# --- mutations ------------------------------------------------------------------------------

NodePath = tuple[str | int, ...]


def _nodes(node: Any, path: NodePath = ()) -> Iterator[NodePath]:
    """Every path below ``node`` (keys of tables, indices of lists)."""
    if isinstance(node, dict):
        for key, child in node.items():
            yield (*path, key)
            yield from _nodes(child, (*path, key))
    elif isinstance(node, list):
        for index, child in enumerate(node):
            yield (*path, index)
            yield from _nodes(child, (*path, index))


def _parent(doc: Any, path: NodePath) -> Any:
    for part in path[:-1]:
        doc = doc[part]
    return doc


def _typo(key: str, data: st.DataObject) -> str:
    if not key:
        return "x"
    kind = data.draw(st.sampled_from(["drop", "double", "swap", "case", "space"]))
    i = data.draw(st.integers(0, len(key) - 1))
    if kind == "drop":
        return key[:i] + key[i + 1 :] or "x"
    if kind == "double":
        return key[:i] + key[i] + key[i:]
    if kind == "swap" and len(key) > 1:
        j = min(i + 1, len(key) - 1)
        chars = list(key)
        chars[i], chars[j] = chars[j], chars[i]
        return "".join(chars)
    if kind == "case":
        return key.upper()
    return key + " "


def _mutate(doc: dict[str, Any], data: st.DataObject) -> None:
    kind = data.draw(
        st.sampled_from(["delete", "replace", "rename", "duplicate_stage", "shuffle_legs"])
    )
    paths = list(_nodes(doc))
    if kind == "duplicate_stage":
        stages = doc.get("stage")
        if isinstance(stages, list) and stages:
            chosen = data.draw(st.sampled_from(stages))
            stages.insert(data.draw(st.integers(0, len(stages))), copy.deepcopy(chosen))
        return
    if kind == "shuffle_legs":
        legs = doc.get("leg")
        if isinstance(legs, list):
            doc["leg"] = data.draw(st.permutations(legs))
        return
    if not paths:
        return
    path = data.draw(st.sampled_from(paths))
    parent = _parent(doc, path)
    last = path[-1]
    if kind == "delete":
        del parent[last]
    elif kind == "replace":
        parent[last] = data.draw(VALUES)
    elif isinstance(parent, dict):  # rename
        parent[_typo(str(last), data)] = parent.pop(last)


def _check(document: Any) -> None:
    try:
        result = parse_mission(document)
    except PropulsionError:
        return
    assert isinstance(result, Mission)


@pytest.fixture(scope="module", autouse=True)
def _in_empty_dir(tmp_path_factory: pytest.TempPathFactory) -> Iterator[None]:
    """Work in a folder holding only the examples' own data files (their motor curves and
    soundings), so random relative file names find nothing else to read."""
    folder = tmp_path_factory.mktemp("fuzz")
    for data in MISSIONS_DIR.glob("*.csv"):
        shutil.copy(data, folder / data.name)
    with pytest.MonkeyPatch.context() as patch:
        patch.chdir(folder)
        yield


# --- properties -----------------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(EXAMPLES))
def test_examples_load_unchanged(name: str) -> None:
    # Baseline for the mutations below: the unmutated documents are good missions.
    assert isinstance(parse_mission(copy.deepcopy(EXAMPLES[name])), Mission)


@FUZZ
@given(name=st.sampled_from(sorted(EXAMPLES)), data=st.data())
def test_mutated_examples_give_a_mission_or_a_project_error(name: str, data: st.DataObject) -> None:
    doc = copy.deepcopy(EXAMPLES[name])
    for _ in range(data.draw(st.integers(1, 3))):
        _mutate(doc, data)
    _check(doc)


@FUZZ
@given(name=st.sampled_from(sorted(EXAMPLES)), data=st.data())
def test_mutated_examples_as_toml_text(name: str, data: st.DataObject) -> None:
    # The same mutations, written back as TOML-like text with one value replaced by a raw
    # token, so the text path (tomllib, line lookup) is exercised too.
    doc = copy.deepcopy(EXAMPLES[name])
    _mutate(doc, data)
    token = data.draw(
        st.sampled_from(["nan", "-inf", "1e400", '"1e400 s"', "true", "[]", "{}", '"', "9" * 30])
    )
    lines = _to_toml(doc).splitlines()
    candidates = [i for i, line in enumerate(lines) if " = " in line]
    if candidates:
        i = data.draw(st.sampled_from(candidates))
        lines[i] = lines[i].split(" = ", 1)[0] + " = " + token
    _check("\n".join(lines) + "\n")


@FUZZ
@given(doc=st.dictionaries(KEYS, VALUES, max_size=6))
def test_random_tables_give_a_mission_or_a_project_error(doc: dict[str, Any]) -> None:
    _check(doc)


@FUZZ
@given(text=st.text(max_size=200))
def test_random_text_gives_a_project_error(text: str) -> None:
    _check(text)


# --- a small TOML writer for the text property ----------------------------------------------


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        text = repr(value)
        return {"inf": "inf", "-inf": "-inf", "nan": "nan"}.get(text, text)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(item) for item in value) + "]"
    if isinstance(value, dict):
        items = ", ".join(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items())
        return "{" + items + "}"
    return '"?"'


def _toml_key(key: Any) -> str:
    text = str(key)
    return text if re.fullmatch(r"[A-Za-z0-9_-]+", text) else json.dumps(text, ensure_ascii=False)


def _to_toml(doc: dict[str, Any]) -> str:
    """Write a document as TOML, one 'key = value' per line, tables as headers."""
    out: list[str] = []
    simple = {k: v for k, v in doc.items() if not _is_table(v) and not _is_table_array(v)}
    for key, value in simple.items():
        out.append(f"{_toml_key(key)} = {_toml_value(value)}")
    for key, value in doc.items():
        if _is_table(value):
            out.append(f"[{_toml_key(key)}]")
            out.extend(_table_body(value, (key,)))
        elif _is_table_array(value):
            for entry in value:
                out.append(f"[[{_toml_key(key)}]]")
                out.extend(_table_body(entry, (key,)))
    return "\n".join(out)


def _table_body(table: dict[str, Any], path: tuple[Any, ...]) -> list[str]:
    lines = [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in table.items() if not _is_table(v)]
    for key, value in table.items():
        if _is_table(value):
            lines.append("[" + ".".join(_toml_key(p) for p in (*path, key)) + "]")
            lines.extend(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items())
    return lines


def _is_table(value: Any) -> bool:
    return isinstance(value, dict)


def _is_table_array(value: Any) -> bool:
    return isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)


@pytest.mark.parametrize("name", sorted(EXAMPLES))
def test_toml_writer_round_trips_the_examples(name: str) -> None:
    # Guard for the text property: the writer reproduces each example document exactly.
    assert tomllib.loads(_to_toml(EXAMPLES[name])) == EXAMPLES[name]
