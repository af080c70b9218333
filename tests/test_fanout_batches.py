"""Chunked, scattered fan-out: the same results, in the same order, as the serial loop.

The chunks are formed by Graham's longest-processing-time-first rule (R. L.
Graham, "Bounds on multiprocessing timing anomalies", SIAM J. Appl. Math. 17,
416 (1969)): its largest load is at most (4/3 - 1/(3m)) times the optimum on m
machines, checked here against the optimum found by trying every assignment.
The exception contract is the one of a plain ``for`` loop: the caller sees the
exception of the first failing item in item order.
"""

from __future__ import annotations

import itertools

import pytest

from nogo import fanout


def _affine(shared, x):
    a, b = shared
    return a * x + b


def _fails_at_three_and_five(x):
    if x in (3, 5):
        raise ValueError(f"item {x} is bad")
    return -x


def _serial_error(fn, items):
    try:
        [fn(x) for x in items]
    except Exception as err:  # the loop's own exception is the reference
        return type(err), str(err)
    raise AssertionError("the reference loop did not fail")


def _opt_makespan(costs, m):
    best = float("inf")
    for assign in itertools.product(range(m), repeat=len(costs)):
        load = [0.0] * m
        for c, k in zip(costs, assign):
            load[k] += c
        best = min(best, max(load))
    return best


def test_chunks_cover_every_item_once_in_item_order():
    for n, slots in ((1, 2), (3, 2), (10, 2), (37, 3), (100, 1)):
        for costs in (None, [float((7 * i) % 11) for i in range(n)]):
            parts = fanout.chunks_for(n, slots, costs)
            assert sorted(i for p in parts for i in p) == list(range(n))
            assert all(p == sorted(p) and p for p in parts)
            assert len(parts) <= fanout._PER_WORKER * slots


def test_lpt_chunks_within_grahams_bound_and_dearest_first():
    m = fanout._PER_WORKER  # one slot: that many chunks
    # Graham's worst case for m machines: 2m+1 jobs 2m-1, 2m-1, 2m-2, 2m-2, ..., m+1, m+1, m, m, m;
    # the optimum is 3m, LPT gives 4m-1, exactly the bound (4/3 - 1/(3m)) * 3m
    tight = [float(c) for c in range(2 * m - 1, m, -1) for _ in range(2)] + [float(m)] * 3
    cases = [(tight, 3.0 * m), ([9.0, 7.0, 6.0, 5.0, 5.0, 4.0, 2.0, 1.0], None)]
    for costs, opt in cases:
        parts = fanout.chunks_for(len(costs), 1, costs)
        loads = [sum(costs[i] for i in p) for p in parts]
        assert len(parts) == m and loads == sorted(loads, reverse=True)  # submitted dearest first
        opt = opt if opt is not None else _opt_makespan(costs, m)
        assert max(loads) <= (4 / 3 - 1 / (3 * m)) * opt + 1e-12
    assert max(sum(tight[i] for i in p) for p in fanout.chunks_for(len(tight), 1, tight)) == 4 * m - 1


def test_shared_input_serial_and_process_pool_agree():
    items = list(range(23))
    want = [3 * x + 1 for x in items]
    assert fanout.fan_out(_affine, items, shared=(3, 1)) == want
    assert fanout.fan_out(_affine, items, workers=2, shared=(3, 1)) == want


def test_process_pool_raises_the_loops_exception():
    items = list(range(8))
    kind, text = _serial_error(_fails_at_three_and_five, items)
    with pytest.raises(kind, match=text):
        fanout.fan_out(_fails_at_three_and_five, items, workers=2)


@pytest.mark.slow
def test_dask_chunks_keep_order_scatter_once_and_raise_the_first_failure():
    items = list(range(57))
    want = [3 * x + 1 for x in items]
    shared = (3, 1)
    kind, text = _serial_error(_fails_at_three_and_five, list(range(9)))
    with fanout.engine(local_workers=2):
        assert fanout.width() == 2
        got = fanout.fan_out(_affine, items, shared=shared, cost=lambda x: (x * 37) % 13)
        again = fanout.fan_out(_affine, items[::-1], shared=shared)
        assert len(fanout._SCATTERED) == 1  # the same object is sent to the workers once per engine
        # item 5 may well finish before item 3 (another chunk); the caller still sees item 3's exception
        with pytest.raises(kind, match=text):
            fanout.fan_out(_fails_at_three_and_five, list(range(9)), cost=lambda x: float(x == 5))
    assert got == want and again == want[::-1]
    assert fanout._SCATTERED == [] and not fanout.is_open()


@pytest.mark.slow
def test_one_worker_engine_gives_the_serial_facets(theory):
    """bell-2x3 Bell-local: 684 facets in 3 classes (D. Collins and N. Gisin, J. Phys. A 37, 1775 (2004))."""
    from nogo.facets import facets

    serial = facets(theory("bell-2x3"), "Bell-local", cache=False)
    with fanout.engine(local_workers=1):
        one = facets(theory("bell-2x3"), "Bell-local", cache=False)
    assert sorted((f.a, f.b) for f in one.facets) == sorted((f.a, f.b) for f in serial.facets)
    assert len(one.facets) == 684 and len(one.classes) == 3


@pytest.mark.slow
def test_three_party_facets_on_two_workers_equal_the_serial_ones(theory):
    """53,856 facets in 46 classes (A. Śliwa, Phys. Lett. A 317, 165 (2003)); one face is decomposed again,
    so the batched rounds of both levels and the chunked ridge hulls are all exercised."""
    from nogo.compile import compile_bundle
    from nogo.polytope import derive_symmetric
    from nogo.symmetry import bundle_generators

    th = theory("bell-3x2")
    model, gens = compile_bundle(th, "Bell-local"), bundle_generators(th, "Bell-local")
    serial = derive_symmetric(model, generators=gens)
    with fanout.engine(local_workers=2):
        two = derive_symmetric(model, generators=gens)
    assert serial.stats["recursive faces"] >= 1
    assert sorted((f.a, f.b) for f in two.facets) == sorted((f.a, f.b) for f in serial.facets)
    assert len(two.facets) == 53856 and len(two.class_sizes) == 46
    assert sorted(two.class_sizes) == sorted(serial.class_sizes)
