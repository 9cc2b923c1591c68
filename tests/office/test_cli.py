"""Contract 3 commands: hub enroll / revoke / digest, sync enroll / hub (exit 0 in step, 1 with the reason)."""

import socket

from mobile.cli import main
from storage import Store
from tests.core.beams import glulam


def _run(capsys, *argv):
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_enroll_sync_digest_revoke_through_the_command_line(served, tmp_path, capsys):
    hub_db = served.hub.path
    code, out, _ = _run(
        capsys, "hub", "enroll", "--db", hub_db, "--name", "Tablet 3", "--person", "R. Eng", "--role", "reviewer"
    )
    assert code == 0
    one_time = out.strip().splitlines()[-1]
    assert len(one_time) == 19
    assert one_time.count("-") == 3  # the code alone on the last line
    tablet = tmp_path / "t.db"
    store = Store(tablet)
    site = store.create_site(name="CLI site")
    store.save_beam(site.id, glulam())
    store.close()
    code, out, err = _run(capsys, "sync", "enroll", "--db", str(tablet), served.url, one_time)
    assert code == 0, err
    assert "Tablet 3" in out
    code, out, err = _run(capsys, "sync", "enroll", "--db", str(tablet), served.url, one_time)
    assert code == 1
    assert "already been used" in err  # one-time
    code, out, err = _run(capsys, "sync", "hub", "--db", str(tablet))
    assert code == 0, err
    _, hub_digest, _ = _run(capsys, "hub", "digest", "--db", hub_db)
    _, tablet_digest, _ = _run(capsys, "sync", "digest", "--db", str(tablet))
    assert hub_digest.strip() == tablet_digest.strip()
    device = Store(tablet).device_id
    code, out, _ = _run(capsys, "hub", "revoke", "--db", hub_db, device)
    assert code == 0
    assert "revoked Tablet 3" in out
    code, _, err = _run(capsys, "sync", "hub", "--db", str(tablet))
    assert code == 1
    assert "revoked" in err


def test_sync_hub_exits_1_with_the_reason_when_unreachable_or_not_enrolled(tmp_path, capsys):
    tablet = tmp_path / "t.db"
    Store(tablet).close()
    code, _, err = _run(capsys, "sync", "hub", "--db", str(tablet))
    assert code == 1
    assert "not enrolled" in err
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]  # closed again: nothing listens there
    from storage.identity import new_private_key, save_enrolment

    store = Store(tablet)
    save_enrolment(store.db, f"http://127.0.0.1:{port}", store.device_id, new_private_key())
    store.close()
    code, _, err = _run(capsys, "sync", "hub", "--db", str(tablet))
    assert code == 1
    assert "cannot reach the office hub" in err


def test_bad_role_and_missing_database_are_user_errors(tmp_path, capsys):
    code, _, err = _run(capsys, "sync", "hub", "--db", str(tmp_path / "none.db"))
    assert code == 2
    assert "no database" in err
    code, _, err = _run(capsys, "hub", "revoke", "--db", str(tmp_path / "hub.db"), "no-such-device")
    assert code == 2
    assert "no enrolled device" in err
