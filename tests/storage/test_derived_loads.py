"""Line loads derived from a tributary width follow the site's design basis as it stands, on every path.

The tablet derives a beam's specified line loads when its tributary width or basis is entered (kPa x m =
kN/m, common practice) and keeps a copy in the record. A site's basis corrected afterwards (a higher snow
load from the drawings' next revision) reached the office register, which derived the loads again, but not
the tablet: its site list, beam sheet and notice kept rechecking the old loads, so the same beam could read
"ok" on the tablet and "fails" in the register. Every path now derives them from the synced site and record.
"""

from __future__ import annotations

import pytest

from core.recheck import recheck
from core.records import DesignBasis
from storage import Store, results
from tests.core.beams import glulam

WIDTH_M = 2.4
ROOF = DesignBasis(dead_kpa=1.2, live_kpa=0.0, snow_kpa=2.6)
CORRECTED = {"dead_kpa": 1.2, "live_kpa": 0.0, "snow_kpa": 4.0, "use": "roof_no_ceiling", "drawings": ""}


@pytest.fixture
def logged(tmp_path):
    """A site, one beam with loads derived from its basis (width kept), one with loads typed directly."""
    store = Store(tmp_path / "t.db")
    site = store.create_site(name="Larch Yard", design_basis=ROOF, load_bases={"canopy": DesignBasis(dead_kpa=0.8)})
    derived = store.save_beam(
        site.id, glulam(mark="RB-1", loads=ROOF.line_loads_kn_m(WIDTH_M)), {"tributary_m": WIDTH_M}
    )
    typed = store.save_beam(site.id, glulam(mark="RB-2", loads={"dead_kn_m": 2.0, "snow_kn_m": 5.0}))
    yield store, site.id, derived, typed
    store.close()


def test_a_corrected_basis_reaches_the_beams_that_keep_a_width(logged):
    store, site_id, derived, typed = logged
    assert store.beam(derived).loads.snow_kn_m == pytest.approx(2.6 * WIDTH_M)  # 6.24 kN/m = 2.6 kPa x 2.4 m
    before = results.fresh(store.db, site_id)[derived]
    store.update_site(site_id, {"design_basis": CORRECTED})
    beam = store.beam(derived)
    assert beam.loads.snow_kn_m == pytest.approx(4.0 * WIDTH_M)  # 9.6 kN/m: the basis as it stands
    assert beam.loads.dead_kn_m == pytest.approx(1.2 * WIDTH_M)
    assert store.beam_record(derived)["loads"]["snow_kn_m"] == pytest.approx(6.24)  # the record is not rewritten
    after = results.fresh(store.db, site_id)[derived]
    assert after.utilisation == pytest.approx(recheck(beam).governing_utilisation, abs=1e-6)
    assert after.utilisation > before.utilisation
    # loads typed directly (no width recorded) stay as typed
    assert store.beam(typed).loads.snow_kn_m == 5.0


def test_the_portfolio_recheck_and_the_register_derive_the_same_loads(logged):
    from office.registry import recheck_input

    store, site_id, derived, _ = logged
    store.update_site(site_id, {"design_basis": CORRECTED})
    results.recheck_all(store.db, processes=1)
    stored = results.stored(store.db, site_id)[derived]
    assert stored.utilisation == pytest.approx(recheck(store.beam(derived)).governing_utilisation, abs=1e-6)
    site_record = store.db.execute("SELECT data FROM site WHERE id = ?", [site_id]).fetchone()[0]
    import json

    data, source = recheck_input(store.beam_record(derived), json.loads(site_record))
    assert data["loads"] == store.beam(derived).loads.model_dump(mode="json")
    assert "snow 4 kPa x tributary width 2.4 m" in source


def test_a_named_basis_is_followed_and_one_no_longer_on_the_site_falls_back_to_the_main_one(logged):
    store, site_id, derived, _ = logged
    store.update_beam(derived, {"load_basis": "canopy"})
    assert store.beam(derived).loads.dead_kn_m == pytest.approx(0.8 * WIDTH_M)
    assert store.beam(derived).loads.snow_kn_m == 0.0
    store.update_site(site_id, {"load_bases": {}})
    assert store.beam(derived).loads.snow_kn_m == pytest.approx(2.6 * WIDTH_M)


def test_the_beam_form_shows_and_rechecks_the_loads_the_recheck_uses(logged):
    from mobile.viewmodels.beam import BeamFormViewModel

    store, site_id, derived, _ = logged
    store.update_site(site_id, {"design_basis": CORRECTED})
    vm = BeamFormViewModel(store, site_id, derived)
    assert vm.form()["snow_kn_m"] == "9.6"  # 4.0 kPa x 2.4 m, not the 6.24 kept in the record
    assert vm.echo("snow_kn_m") == "derived: 2.4 m x 4 kPa (site) = 9.6 kN/m"
    result = vm.refresh()
    assert result is not None
    assert result.governing_utilisation == pytest.approx(recheck(store.beam(derived)).governing_utilisation)
