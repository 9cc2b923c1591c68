"""Readable one-screen summary of a recheck (``bracewalk check --text``)."""

from __future__ import annotations

from core.results import Recheck


def _num(x: float | None, fmt: str = ".3f") -> str:
    return "n/a" if x is None else format(x, fmt)


def recheck_text(r: Recheck) -> str:
    """Format a recheck as plain text for a terminal."""
    lines = [f"{r.mark}: {r.status.value.upper().replace('_', ' ')}"]
    for b in r.bending:
        size = f"KZbg {_num(b.kzbg)}" if b.kzbg is not None else f"KZb {_num(b.kzb, '.2f')}"
        lines.append(
            f"  bending {b.region} ({b.sign}): "
            + ("Lu held continuously" if b.lu_mm is None else f"Lu {b.lu_mm:.0f} mm")
            + f", CB {_num(b.cb, '.2f')}, "
            f"KL {_num(b.kl)}, {size}, Mr {_num(b.mr_knm, '.1f')} kN·m vs Mf {b.mf_knm:.1f} kN·m, "
            f"utilisation {_num(b.utilisation, '.2f')} [{b.combination}] {b.outcome}"
        )
    s = r.shear
    lines.append(f"  shear: Vr {s.vr_kn:.1f} kN vs Vf {s.vf_kn:.1f} kN, utilisation {s.utilisation:.2f} ({s.method})")
    for q in r.bearing:
        lines.append(
            f"  bearing support {q.support}: Qr {q.qr_kn:.1f} kN vs Qf {q.qf_kn:.1f} kN, "
            f"utilisation {q.utilisation:.2f}"
        )
    d = r.deflection
    lines.append(
        f"  deflection ({d.case}, {d.element}): {d.delta_mm:.1f} mm vs limit {d.limit_mm:.1f} mm, "
        f"utilisation {d.utilisation:.2f}"
    )
    for f in r.findings:
        lines.append(f"  [{f.priority.value.upper()}] {f.code}: {f.message}")
        lines.append(f"      action: {f.action} ({f.clause})")
    lines.append("")
    lines.append(r.caution)
    return "\n".join(lines)
