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
    # a revocation made in error: what the tablet saved while revoked reaches the hub once it is reinstated
    store = Store(tablet)
    store.create_site(name="Saved while revoked", address="3 Birch Rd")
    store.close()
    code, out, _ = _run(capsys, "hub", "reinstate", "--db", hub_db, device)
    assert code == 0
    assert "reinstated Tablet 3" in out
    code, _, err = _run(capsys, "sync", "hub", "--db", str(tablet))
    assert code == 0, err
    _, hub_digest, _ = _run(capsys, "hub", "digest", "--db", hub_db)
    _, tablet_digest, _ = _run(capsys, "sync", "digest", "--db", str(tablet))
    assert hub_digest.strip() == tablet_digest.strip()
    from office.hubstore import HubStore

    hub = HubStore(hub_db)
    events = [(e, d) for _, e, d in hub.audit(device)]
    hub.close()
    assert [e for e, _ in events][-3:-1] == ["revoked", "reinstated"]
    assert all("by office user command line" in d for e, d in events if e in ("revoked", "reinstated"))


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


def _modules(png_path, scale, border):
    """The dark (True) / light modules read back from the PNG's pixels (the centre of each module)."""
    from PIL import Image

    with Image.open(png_path) as img:
        gray = img.convert("L")
        n = gray.width // scale - 2 * border
        return [
            [
                gray.getpixel(((border + c) * scale + scale // 2, (border + r) * scale + scale // 2)) < 128
                for c in range(n)
            ]
            for r in range(n)
        ]


def test_enroll_writes_a_qr_image_of_the_code_and_keeps_the_code_last(served, tmp_path, capsys):
    import segno
    from PIL import Image

    png = tmp_path / "code.png"
    argv = ["hub", "enroll", "--db", served.hub.path, "--name", "Tablet 4", "--person", "R. Eng", "--role", "reviewer"]
    code, out, _ = _run(capsys, *argv, "--qr", str(png))
    assert code == 0
    one_time = out.strip().splitlines()[-1]
    assert one_time.count("-") == 3  # the command contract: the code alone on the last line
    assert str(png) in out
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, section 5.2)
    with Image.open(png) as img:
        img.verify()  # a complete, valid PNG
    # ISO/IEC 18004 capacity table: version 1 at level M holds 20 alphanumeric characters; a 19-character
    # code of 0-9, A-F and '-' is alphanumeric, so version 1: 21 x 21 modules (+ 4-module quiet zone, 8 px each)
    with Image.open(png) as img:
        assert img.size == ((21 + 2 * 4) * 8, (21 + 2 * 4) * 8)
    seen = _modules(png, 8, 4)
    # ISO/IEC 18004 finder pattern at three corners: a dark 7x7 ring, a light ring, a dark 3x3 centre
    finder = [[r in (0, 6) or c in (0, 6) or (2 <= r <= 4 and 2 <= c <= 4) for c in range(7)] for r in range(7)]
    for r0, c0 in ((0, 0), (0, 14), (14, 0)):
        assert [row[c0 : c0 + 7] for row in seen[r0 : r0 + 7]] == finder
    # the symbol carries exactly this code: module for module the library's own matrix for it
    expected = segno.make(one_time, error="m", micro=False, boost_error=False)
    assert expected.version == 1
    assert expected.mode == "alphanumeric"
    assert seen == [[bool(v) for v in row] for row in expected.matrix]
    other = segno.make(one_time[:-1] + ("0" if one_time[-1] != "0" else "1"), error="m", micro=False)
    assert seen != [[bool(v) for v in row] for row in other.matrix]  # a different code gives another symbol


def test_enroll_qr_into_a_missing_folder_is_a_user_error(served, tmp_path, capsys):
    argv = ["hub", "enroll", "--db", served.hub.path, "--name", "T", "--person", "P", "--role", "reviewer"]
    code, _, err = _run(capsys, *argv, "--qr", str(tmp_path / "no" / "such" / "code.png"))
    assert code != 0
    assert "cannot write the QR image" in err
