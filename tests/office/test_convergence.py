"""Property: 3-5 tablets and the hub, random edits and syncs in random orders, always converge.

Checks (sync.md 3.11): equal digests on every replica and the hub once all have synced; no op lost
(every replica holds every op any replica saved); projections equal a replay of the op log.
"""

import contextlib
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from mobile.hub_client import sync
from storage.store import LifecycleError
from tests.core.beams import glulam
from tests.office.conftest import RunningHub, make_hub

FIELDS = {"b_mm": [130, 175, 215], "d_mm": [456, 494, 532], "notes": ["a", "b", "c"]}

actions = st.lists(
    st.one_of(
        st.tuples(st.just("edit"), st.integers(0, 4), st.sampled_from(sorted(FIELDS)), st.integers(0, 2)),
        st.tuples(st.just("beam"), st.integers(0, 4), st.just(""), st.integers(0, 2)),
        st.tuples(
            st.just("status"), st.integers(0, 4), st.sampled_from(["corrected", "verified", "reopen"]), st.just(0)
        ),
        st.tuples(st.just("sync"), st.integers(0, 4), st.just(""), st.just(0)),
    ),
    min_size=1,
    max_size=25,
)


def _ops(db):
    return set(db.execute("SELECT origin, seq, hlc FROM op").fetchall())


@pytest.mark.parametrize("backend", ["sqlite", "postgresql"])
@settings(
    max_examples=10,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],  # each example makes its own
)
@given(n=st.integers(3, 5), steps=actions, final_order=st.randoms(use_true_random=False))
def test_tablets_and_hub_converge(request, backend, n, steps, final_order):
    with tempfile.TemporaryDirectory() as tmp:
        hub = make_hub(request, backend, Path(tmp) / "hub")
        running = RunningHub(hub).start()
        try:
            tablets = [running.tablet(Path(tmp) / f"t{i}.db", f"T{i}") for i in range(n)]
            site = tablets[0].create_site(name="Converge")
            beam = tablets[0].save_beam(site.id, glulam())
            d = tablets[0].raise_deficiency(
                site.id, beam, "undersize", "observation", "here", "small", "cl. 7", "review"
            )
            for t in tablets:
                assert sync(t).in_step
            for kind, who, what, value in steps:
                t = tablets[who % n]
                if kind == "edit":
                    t.update_beam(beam, {what: FIELDS[what][value]})
                elif kind == "beam":
                    t.save_beam(site.id, glulam(mark=f"N{value}"))
                elif kind == "status":
                    with contextlib.suppress(LifecycleError):  # not a forward move from where this tablet stands
                        t.move_status(d.id, what, f"T{who}", "reviewer")
                else:
                    assert sync(t).in_step
            order = list(range(n))
            final_order.shuffle(order)
            for i in order + order:  # two rounds: everyone has pushed, then everyone pulls the rest
                assert sync(tablets[i]).in_step
            digests = {t.digest() for t in tablets} | {hub.digest()}
            assert len(digests) == 1
            every_op = set().union(*(_ops(t.db) for t in tablets))
            assert all(_ops(t.db) == every_op for t in tablets)
            assert _ops(hub.db) == every_op
            assert hub.projections() == hub.rebuild_projections()
            for t in tablets:
                assert t.projections() == t.rebuild_projections()
            for t in tablets:
                t.close()
        finally:
            running.stop()
            hub.close()
