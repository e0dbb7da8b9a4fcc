"""The whole-list check of correlation pairs agrees with the item-by-item check it stands in for.

``Budget`` checks a list of pairs with numpy in one pass and only a list that
fails it goes through the item-by-item loop, which names the first bad pair
(its messages are pinned in tests/errors).  Here the loop alone is the
reference: with the quick pass switched off, every list must give the same
error text or the same stored pairs and correlation matrix.

The connected sets of correlated inputs are checked against scipy's
``connected_components`` on the dense matrix (a general-purpose reference
library), the way they were computed before the sparse graph was built.
"""

from __future__ import annotations

import gc
import math
import weakref

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldbudget.engine import Budget, InputQuantity, evaluate
from fieldbudget.engine import budget as budget_module
from fieldbudget.engine._runtime import collector_paused, one_blas_thread
from fieldbudget.engine.gum import correlated_sets
from fieldbudget.errors import FieldbudgetError

SYMS = ("a", "b", "c", "d", "e")
INPUTS = tuple(InputQuantity.normal(s, 1.0 + i, 0.1) for i, s in enumerate(SYMS))

symbol = st.sampled_from(SYMS + ("zz",))          # "zz" is not an input
coefficient = st.one_of(
    st.sampled_from([0.0, 0.1, -0.1, 0.2, 1.0, -1.0, 1, 0]),
    st.sampled_from([1.3, math.nan, math.inf, True, "0.5", None]),   # not allowed
)
triple = st.tuples(symbol, symbol, coefficient)
item = st.one_of(triple, triple.map(list), st.tuples(symbol, symbol))
items = st.lists(item, max_size=8)


def _outcome(pairs, quick: bool):
    original = budget_module._quick_pairs
    if not quick:
        budget_module._quick_pairs = lambda items, symbols: None
    try:
        b = Budget(model="a + b + c + d + e", inputs=INPUTS, correlations=tuple(pairs))
    except FieldbudgetError as err:
        return type(err).__name__, str(err)
    finally:
        budget_module._quick_pairs = original
    return b.correlations, b.correlation_matrix().tolist()


@settings(max_examples=300, deadline=None)
@given(items)
def test_quick_check_gives_what_the_item_by_item_check_gives(pairs):
    assert _outcome(pairs, True) == _outcome(pairs, False)


@settings(max_examples=300, deadline=None)
@given(st.lists(triple, max_size=8))
def test_a_list_the_quick_check_accepts_passes_every_item_check(pairs):
    quick = budget_module._plain_pairs(tuple(pairs), list(SYMS))
    if quick is None:
        return
    seen = {}
    for a, b, r in pairs:  # the rules of the item-by-item loop in Budget, written out again
        assert a in SYMS and b in SYMS and a != b
        assert not isinstance(r, bool) and isinstance(r, (int, float)) and math.isfinite(r) and abs(r) <= 1
        key = frozenset((a, b))
        assert seen.setdefault(key, r) == r
    assert [(a, b, float(r)) for a, b, r in pairs] == list(quick[0])
    assert all(type(r) is float for _, _, r in quick[0])


def test_a_repeated_pair_is_found_when_there_are_too_many_inputs_to_mark_every_pair():
    # 1100 inputs: 1100**2 possible pairs exceed the marks kept for 2 pairs, so the keys are sorted instead
    inputs = tuple(InputQuantity.normal(f"x{i}", 1.0, 0.1) for i in range(1100))
    model = " + ".join(q.symbol for q in inputs)
    ok = Budget(model=model, inputs=inputs, correlations=(("x1", "x900", 0.2), ("x900", "x1", 0.2)))
    assert ok.correlation_matrix()[1, 900] == 0.2
    with pytest.raises(FieldbudgetError) as e:
        Budget(model=model, inputs=inputs, correlations=(("x1", "x900", 0.2), ("x900", "x1", 0.3)))
    assert str(e.value) == "correlation between 'x900' and 'x1' must be given once (it was also given as 0.2) (got 0.3)"


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 12), st.lists(st.tuples(st.integers(0, 11), st.integers(0, 11),
                                              st.sampled_from([0.0, 0.3, -0.2])), max_size=20))
def test_correlated_sets_match_scipy_on_the_dense_matrix(n, links):
    from scipy.sparse.csgraph import connected_components

    R = np.eye(n)
    for i, j, r in links:
        if i < n and j < n and i != j:
            R[i, j] = R[j, i] = r
    _, labels = connected_components(np.abs(R - np.diag(np.diag(R))) > 0, directed=False)
    expected = sorted({tuple(np.flatnonzero(labels == k)) for k in set(labels)}, key=lambda t: t[0])
    assert correlated_sets(R) == [tuple(int(i) for i in s) for s in expected]


def test_the_collector_comes_back_as_it_was():
    assert gc.isenabled()
    with collector_paused():
        with collector_paused():
            assert not gc.isenabled()
        assert not gc.isenabled()          # the outer pause still holds
    assert gc.isenabled()
    with pytest.raises(ZeroDivisionError):
        with collector_paused():
            _ = 1 / 0
    assert gc.isenabled()
    gc.disable()
    try:
        with collector_paused():
            pass
        assert not gc.isenabled()          # a collector the caller switched off stays off
    finally:
        gc.enable()


def test_blas_comes_back_to_its_threads():
    from threadpoolctl import threadpool_info

    before = [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"]
    with one_blas_thread():
        with one_blas_thread():
            pass
        inside = [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"]
    assert inside and set(inside) == {1}
    assert [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"] == before


def test_a_budget_is_freed_without_the_garbage_collector():
    # a budget that referred to itself (through its cached unit check) lived, with its n x n matrix,
    # until a collection found the cycle
    b = Budget(model="a + b", inputs=INPUTS[:2], correlations=(("a", "b", 0.5),))
    evaluate(b)
    ref = weakref.ref(b)
    gc.disable()
    try:
        del b
        assert ref() is None
    finally:
        gc.enable()


def test_an_inconsistent_matrix_of_many_inputs_is_refused_at_once_with_the_inputs_named():
    # equal correlation r = -0.01 between 300 inputs: every 3 x 3 minor is positive definite
    # (1 + 2r > 0), but the smallest eigenvalue of the whole matrix is 1 + (n - 1) r = -1.99 < 0 (common
    # practice: the eigenvalues of an equicorrelation matrix are 1 - r and 1 + (n - 1) r).  Regression: the
    # search for an inconsistent triple ran over all n^3/6 triples (4.5e6 here, 1.7e8 at 1000 inputs)
    import pytest

    from fieldbudget.engine import Budget, InputQuantity
    from fieldbudget.errors import CorrelationError

    n = 300
    qs = tuple(InputQuantity.normal(f"x{i}", 0.0, 1.0) for i in range(n))
    pairs = tuple((f"x{i}", f"x{j}", -0.01) for i in range(n) for j in range(i + 1, n))
    with pytest.raises(CorrelationError) as err:
        Budget(model=" + ".join(q.symbol for q in qs), inputs=qs, correlations=pairs)
    text = str(err.value)
    assert "smallest eigenvalue -1.99" in text and "the inputs most involved: 'x" in text
