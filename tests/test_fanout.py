"""Dask as the distributed engine: a 2-worker LocalCluster gives the same answers as the serial run.

Published values reused as the answers: 684 facets in 3 classes for the local
polytope with two parties and three binary settings (D. Collins and N. Gisin,
J. Phys. A 37, 1775 (2004)); 24 facets for the CHSH scenario (A. Fine, PRL 48,
291 (1982)).
"""

from __future__ import annotations

import pytest

from nogo import fanout


def _square(x):
    return x * x


def test_serial_by_default():
    assert fanout.current_engine() == "this process"
    assert fanout.fan_out(_square, range(5)) == [0, 1, 4, 9, 16]
    assert fanout.width() == 1


def test_unreachable_scheduler_is_an_input_error():
    from nogo.errors import InputError

    with pytest.raises(InputError):
        with fanout.engine(scheduler="tcp://127.0.0.1:9", connect_timeout="2s"):
            pass


def test_local_cluster_gives_the_serial_answers(theory):
    from nogo.facets import facets

    serial = facets(theory("bell-2x3"), "Bell-local", cache=False)
    serial_small = facets(theory("bell-2x2"), "Bell-local", cache=False)
    with fanout.engine(local_workers=2) as client:
        assert len(client.scheduler_info()["workers"]) == 2
        assert fanout.width() == 2 and "Dask" in fanout.current_engine()
        assert fanout.fan_out(_square, range(5)) == [0, 1, 4, 9, 16]
        dist = facets(theory("bell-2x3"), "Bell-local", cache=False)
        dist_small = facets(theory("bell-2x2"), "Bell-local", cache=False)
    assert fanout.current_engine() == "this process"
    for a, b in ((serial, dist), (serial_small, dist_small)):
        assert sorted((f.a, f.b) for f in a.facets) == sorted((f.a, f.b) for f in b.facets)
        assert {c.name: c.size for c in a.classes} == {c.name: c.size for c in b.classes}
    assert len(dist.facets) == 684 and len(dist.classes) == 3  # Collins & Gisin (2004)


def test_local_cluster_gives_the_serial_minimal_sets(theory):
    from nogo.catalog import load_catalog
    from nogo.minimal import find_for_many

    th = theory("friends-2x2")
    ineq = load_catalog()["CHSH"].inequality(th.scenario)
    serial = find_for_many(th, [ineq])
    with fanout.engine(local_workers=2):
        dist = find_for_many(th, [ineq, ineq], workers=2)
    key = lambda r: sorted(sorted(a.subset) for a in r.minimal)  # noqa: E731
    assert key(dist[0]) == key(dist[1]) == key(serial[0]) and key(serial[0])
