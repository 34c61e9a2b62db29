"""Linear recipe steps carried out on the ledger and the held factor, with the recipe's own
names and placement. Raises Rebuild for anything it cannot reproduce exactly; reads no rows.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from rankscope.core.workspace import CONSTANT
from rankscope.design.steps import output_name
from rankscope.design.working import PREDICTOR, RESPONSE
from rankscope.scale.ledger import Entry, Ledger, Rebuild
from rankscope.scale.start import held_id
from rankscope.scale.store import Store

#: Steps done on the factor; the others (log, power, product, kind, missing) reach rows.
LINEAR = ("response", "intercept", "drop", "restore", "indicators", "center", "standardize",
          "unit_length", "multiply", "combine")
#: combine methods that are linear in the members.
LINEAR_COMBINE = ("sum", "mean", "difference", "first_component")
#: Relative gap between the first two singular values below which the first component's
#: direction is too poorly determined to agree with the rows to 10 digits (the direction's
#: error is about eps/gap, Golub & Van Loan 4th ed. §8.6.1).
GAP = 1e-4


@dataclass(frozen=True)
class State:
    """What a linear step changes: the ledger, the held factor, the next free key."""

    ledger: Ledger
    store: Store
    next_key: int
    n_total: int  # rows in the table (the recipe's first pass runs on all of them)


def _new_entry(state: State, name: str, parents: list[Entry]) -> Entry:
    """As rankscope.design.working.derived: a numeric column inheriting sources and problems."""
    sources = frozenset().union(*(p.sources for p in parents))
    problem = next((p.problem for p in parents if p.problem), None)
    return Entry(key=state.next_key, name=name, kind="numeric", sources=sources,
                 problem=problem, held=held_id(state.next_key))


def _held(e: Entry) -> str:
    if e.held is None:
        raise Rebuild(f"{e.name!r} has missing values on the rows used")
    return e.held


def _single(state: State, step: dict[str, Any]) -> State:
    """center, standardize, unit_length, multiply (apply_columns.apply_single)."""
    kind = step["step"]
    led, st = state.ledger, state.store
    col = led.number(step["column"])
    x = _held(col)
    if kind == "center":
        combo, bound = {x: 1.0, CONSTANT: -st.ws.mean(x)}, 2.0 * st.bound[x]
    elif kind == "standardize":
        cl = st.centered_length(x)
        st.guard(cl, x, "the spread")
        if st.n < 2:
            raise Rebuild("one row has no standard deviation")
        sd = cl / math.sqrt(st.n - 1)  # ddof = 1, as numpy std(ddof=1)
        # |standardized value| <= (m-1)/sqrt(m) < sqrt(m) on m rows (Samuelson's inequality).
        combo, bound = {x: 1.0 / sd, CONSTANT: -st.ws.mean(x) / sd}, math.sqrt(state.n_total)
    elif kind == "unit_length":
        length = st.ws.length(x)
        st.guard(length, x, "the length")
        combo, bound = {x: 1.0 / length}, 1.0
    else:
        by = float(step["by"])
        combo, bound = {x: by}, abs(by) * st.bound[x]
    out = _new_entry(state, output_name(step), [col])
    if step.get("keep", False):
        led.check_free(out.name)
        led = led.insert_after(col, out)
    else:
        led.check_free(out.name, replacing=(col,))
        led, _ = led.put_in_place(col, out)
    return replace(state, ledger=led, store=st.derive(_held(out), combo, bound),
                   next_key=state.next_key + 1)


def _first_component(st: Store, ids: list[str], n_total: int) -> tuple[dict[str, float], float]:
    """Scores on the first principal component of the standardized members, as a combination.

    The standardized members Z have the factor T[1:, ids]·diag(1/sd) (same Gram matrix), so
    Z's right singular vectors come from that small block (Golub & Van Loan §8.6.3). The
    sign rule is the recipe's: the largest weight is positive.
    """
    if st.n < 2:
        raise Rebuild("too few rows for a component")
    C = st.ws.column_block(ids)[1:]
    lengths = np.linalg.norm(C, axis=0)
    for hid, cl in zip(ids, lengths, strict=True):
        st.guard(float(cl), hid, "a member's spread")
    sd = lengths / math.sqrt(st.n - 1)
    _, s, vt = np.linalg.svd(C / sd, full_matrices=False)
    if s[0] - s[1] <= GAP * s[0]:
        raise Rebuild("the first component is not well separated from the second")
    v = vt[0]
    order = np.argsort(-np.abs(v))
    if abs(v[order[0]]) - abs(v[order[1]]) <= GAP * abs(v[order[0]]) and (
        np.sign(v[order[0]]) != np.sign(v[order[1]])
    ):
        raise Rebuild("the component's sign rule is a tie")
    w = v * np.sign(v[order[0]])
    means = np.array([st.ws.mean(h) for h in ids])
    combo = {h: float(wj / sj) for h, wj, sj in zip(ids, w, sd, strict=True)}
    combo[CONSTANT] = float(-np.sum(w * means / sd))
    # |score| = |zᵢ·w| <= ||zᵢ|| <= sqrt(k·m) on m rows, each |z| < sqrt(m) (Samuelson).
    return combo, math.sqrt(len(ids) * n_total)


def _combine(state: State, step: dict[str, Any]) -> State:
    """sum, mean, difference, first_component (apply_groups.apply_combine)."""
    method = step["method"]
    if method not in LINEAR_COMBINE:
        raise Rebuild(f"combine by {method} is not linear")
    led, st = state.ledger, state.store
    members = [led.number(c) for c in step["columns"]]
    if any(m.role == RESPONSE for m in members):
        raise Rebuild("the response cannot be combined")
    name = step["name"]
    led.check_free(name, replacing=members)
    ids = [_held(m) for m in members]
    bounds = [st.bound[h] for h in ids]
    if method == "sum":
        combo, bound = {h: 1.0 for h in ids}, sum(bounds)
    elif method == "mean":
        k = len(ids)
        combo, bound = {h: 1.0 / k for h in ids}, sum(bounds) / k
    elif method == "difference":
        combo, bound = {ids[0]: 1.0, ids[1]: -1.0}, bounds[0] + bounds[1]
    else:
        combo, bound = _first_component(st, ids, state.n_total)
    out = _new_entry(state, name, members)
    first = members[0]
    led, out = led.put_in_place(first, out)
    out = replace(out, role=PREDICTOR, on_missing="delete_rows")
    led = led.set(out).without({m.key for m in members[1:]})
    gone = {m.key for m in members}
    led = replace(led, entries=tuple(replace(e, anchor=out.key) if e.anchor in gone else e
                                     for e in led.entries))
    return replace(state, ledger=led, store=st.derive(_held(out), combo, bound),
                   next_key=state.next_key + 1)


def apply_linear(state: State, step: dict[str, Any]) -> State:
    """The state after one validated step, or Rebuild when the step needs the rows."""
    kind = step["step"]
    led = state.ledger
    if kind == "response":
        return replace(state, ledger=led.with_response(step["column"]))
    if kind == "intercept":
        return replace(state, ledger=replace(led, intercept=bool(step["include"])))
    if kind == "drop":
        return replace(state, ledger=led.drop(step["column"]))
    if kind == "restore":
        return replace(state, ledger=led.restore(step["column"]))
    if kind == "indicators":
        return replace(state, ledger=led.with_reference(step["column"], step.get("reference")))
    if kind in ("center", "standardize", "unit_length", "multiply"):
        return _single(state, step)
    if kind == "combine":
        return _combine(state, step)
    raise Rebuild(f"a {kind} step is not linear: it is replayed on the rows")
