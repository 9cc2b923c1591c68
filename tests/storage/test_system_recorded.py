"""A sawn member's load-sharing system (KH) that was not recorded is said so, wherever the beam is printed.

The recheck takes a single member where the system was not recorded: KH = 1.0 is the least of the
system factors of CSA O86-19 Table 6.12 (single 1.0, load-sharing 1.10, light-frame 1.40, built-up
1.10; from memory, the rows our tables hold), so it is the unfavourable case. The modelling rule of
the project (assume the unfavourable case and say so) needs the paper to say it was assumed: the
notice's trace and the recheck sheet used to print "system case single: KH 1", as if it had been seen.
"""

import pytest

from core.models import SystemCase
from core.recheck import recheck
from reports.inputs import input_rows
from storage import Store, results
from tests.core.beams import sawn

NOT_RECORDED_KH = "system not recorded: taken as a single member (the unfavourable case), KH 1"


@pytest.fixture
def store(tmp_path):
    return Store(tmp_path / "s.db")


def _system_row(beam):
    return dict(input_rows(beam))["System"]


def test_a_sawn_beam_saved_without_its_system_reads_back_as_not_recorded(store):
    site = store.create_site(name="Yard")
    beam_id = store.save_beam(site.id, sawn(mark="J-1"))
    record = store.beam_record(beam_id)
    # stored as every version reads it: "single" with the flag saying it was not recorded
    assert (record["system"], record["system_recorded"]) == ("single", False)
    beam = store.beam(beam_id)
    assert beam.system is None
    assert _system_row(beam) == "not recorded: taken as a single member (KH 1.0, the unfavourable case)"
    got = results.fresh(store.db, site.id)[beam_id]
    assert any(NOT_RECORDED_KH in r["source"] for r in got.rows_used)
    # the same KH as a single member: only the words differ (Table 6.12, single member 1.0)
    single = recheck(sawn(system="single"))
    assert got.utilisation == pytest.approx(single.governing_utilisation, abs=1e-6)  # stored to 6 places


@pytest.mark.parametrize(
    ("system", "words"),
    [("single", "single member"), ("shared", "load-sharing system"), ("light_frame", "light-frame system")],
)
def test_a_recorded_system_is_printed_as_recorded(store, system, words):
    site = store.create_site(name="Yard")
    beam_id = store.save_beam(site.id, sawn(mark="J-2", system=system))
    record = store.beam_record(beam_id)
    assert (record["system"], record["system_recorded"]) == (system, True)
    beam = store.beam(beam_id)
    assert beam.system is SystemCase(system)
    assert _system_row(beam) == words
    got = results.fresh(store.db, site.id)[beam_id]
    assert any(f"system recorded: {words}, KH" in r["source"] for r in got.rows_used)
    assert not any("not recorded" in r["source"] for r in got.rows_used)


def test_a_record_from_before_the_flag_holding_single_was_not_recorded(store):
    """Records saved before the tablet had a system picker hold core's old default "single", no flag."""
    site = store.create_site(name="Yard")
    beam_id = store.save_beam(site.id, sawn(mark="J-3"))
    store.update_beam(beam_id, {"system_recorded": None})
    assert store.beam(beam_id).system is None
    assert results.recorded_system({"system": "single"}) is None
    assert results.recorded_system({"system": "shared"}) == "shared"
    assert results.recorded_system({"system": "single", "system_recorded": True}) == "single"
