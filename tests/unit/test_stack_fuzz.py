"""Random mutations of a valid stack file: only a StackError or success may come out."""

from __future__ import annotations

import tomllib

from conftest import SCREENED
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from qhdesign.errors import StackError
from qhdesign.stack import loads_stack

BASE = tomllib.loads(SCREENED.read_text())


def _paths(doc, prefix=()):
    """Every (container, key) address in the raw document."""
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield (*prefix, k)
            yield from _paths(v, (*prefix, k))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield (*prefix, i)
            yield from _paths(v, (*prefix, i))


PATHS = list(_paths(BASE))
JUNK_VALUES = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(-(10**20), 10**20),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=20),
    st.sampled_from(
        [
            "25",
            "25 V",
            "-1 nm",
            "0 nm",
            "1e30 cm^-2",
            "3 eV",
            "nan nm",
            "inf K",
            "1 m",
            "primary",
            "screening",
            "GaAs",
            "AlAs",
            "dx",
            "gate",
            "back_gate",
            "1e16 cm^-2",
            "-5 K",
            "0.5",
        ]
    ),
    st.lists(st.integers(), max_size=3),
    st.dictionaries(st.text(max_size=5), st.integers(), max_size=2),
)


def _value(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return {"nan": "nan", "inf": "inf", "-inf": "-inf"}.get(repr(v), repr(v))
    if isinstance(v, int):
        return str(v)
    if isinstance(v, str):
        return '"' + v.encode("unicode_escape").decode().replace('"', '\\"') + '"'
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v if x is not None) + "]"
    if isinstance(v, dict):
        items = [f'"{k}" = {_value(x)}' for k, x in v.items() if x is not None]
        return "{" + ", ".join(items) + "}"
    raise TypeError(type(v))


def _to_toml(doc) -> str:
    """A general TOML writer for arbitrary (mutated) documents; None values are dropped."""
    head, tail = [], []
    for k, v in doc.items():
        if v is None:
            continue
        if isinstance(v, dict) and all(isinstance(x, dict) for x in v.values()) and v:
            for sub, tab in v.items():
                tail.append(f'["{k}"."{sub}"]')
                tail += [f'"{a}" = {_value(b)}' for a, b in tab.items() if b is not None]
        elif isinstance(v, dict):
            tail.append(f'["{k}"]')
            tail += [f'"{a}" = {_value(b)}' for a, b in v.items() if b is not None]
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for tab in v:
                tail.append(f'[["{k}"]]')
                tail += [f'"{a}" = {_value(b)}' for a, b in tab.items() if b is not None]
        else:
            head.append(f'"{k}" = {_value(v)}')
    return "\n".join(head + tail) + "\n"


def _mutate(doc, path, action, value):
    import copy

    doc = copy.deepcopy(doc)
    node = doc
    for part in path[:-1]:
        node = node[part]
    last = path[-1]
    if action == "delete":
        del node[last]
    elif action == "set":
        node[last] = value
    elif action == "rename" and isinstance(node, dict):
        node[str(value)[:8] + "_k"] = node.pop(last)
    return doc


@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    mutations=st.lists(
        st.tuples(
            st.sampled_from(PATHS), st.sampled_from(["delete", "set", "rename"]), JUNK_VALUES
        ),
        min_size=1,
        max_size=3,
    )
)
def test_structured_mutations(mutations):
    doc = BASE
    for path, action, value in mutations:
        try:
            doc = _mutate(doc, path, action, value)
        except (KeyError, IndexError, TypeError):
            continue  # the path vanished in an earlier mutation
    _only_stack_error_or_success(_to_toml(doc))


@settings(max_examples=150, deadline=None)
@given(data=st.binary(max_size=400), pos=st.integers(0, 4000))
def test_random_bytes_spliced_in(data, pos):
    raw = SCREENED.read_bytes()
    pos = min(pos, len(raw))
    _only_stack_error_or_success(raw[:pos] + data + raw[pos:])


def _only_stack_error_or_success(payload):
    try:
        stack = loads_stack(payload, source="fuzz.toml")
    except StackError as exc:
        msg = str(exc)
        assert "\n" not in msg and msg.startswith("fuzz.toml")
        return
    assert stack.layers  # success means a usable stack
    stack.profile()
