"""A site: its beams grouped by level and gridline with status; open deficiencies by priority; visits."""

from __future__ import annotations

import copy
import re
import sqlite3
import threading
import time
from dataclasses import dataclass, field
from typing import Any

from core.recheck import recheck
from core.records import Stage
from core.results import PRIORITY_ORDER
from mobile.viewmodels.common import (
    PRIORITY_LABELS,
    STAGE_WORDS,
    STATUS_WORDS,
    UNSEEN_TAKEN_UNFAVOURABLE,
    status_label,
)
from reports.words import SHORT_PRIORITY
from storage import Store, results
from storage.clock import uuid7
from storage.gcpause import gc_paused

# A new beam holds nothing that looks measured: span, size, loads and bearings start "not yet
# entered" and the recheck lists what it still needs. Pickers start on the most common member.
NEW_BEAM_DEFAULTS: dict[str, Any] = {
    "material": "glulam",
    "species": "D.Fir-L",
    "grade": "24f-E",
    "top_edge": {"braced_by": "none", "spacing_mm": None, "fastened": None},  # not recorded: taken as not fastened
}
LEVEL_NOT_RECORDED = "level not recorded"
RECHECK_NOTICE_AT = 500  # stale beams (~0.1-0.2 s of rechecking) from which the screen rechecks in a worker thread
RECHECK_PART = 500  # beams the background recheck stores per transaction (its progress steps; where a stop lands)
UNRAISED_NAMED = 30  # beams the unraised-findings warning names before "and N more" (its count comes first)
UNRAISED_BAND_NAMED = 4  # on the site screen's band (three lines at most in the landscape column); a tap shows all
KEEP = "\u00a0"  # a no-break space: the words it joins wrap as one (a status's count and words)
PINNED = "▲ IMMEDIATE open: pinned"  # beams with an open IMMEDIATE deficiency, shown first (also under their level)
# The site screen's caution band, short so the beam list keeps the height (its tap shows core.results.CAUTION
# whole); it still says what the full caution says of the results and of who governs.
CAUTION_SHORT = (
    "Results support, never replace, the judgement of the engineer of record. Local codes and licensed practice "
    f"govern. {UNSEEN_TAKEN_UNFAVOURABLE} Tap here for the full caution."
)


_DIGITS = re.compile(r"(\d+)")


def level_key(level: str) -> tuple[tuple[tuple[str, int], ...], str]:
    """The order levels are listed in: runs of digits as numbers (L2 before L10), the rest as text without case.

    'B1' comes before 'L1' as text does. Ties (case, leading zeros) go by the text itself, so the order is total.
    """
    parts = _DIGITS.split(level.casefold())  # text, digits, text, ..., text
    runs = tuple((parts[i], int(parts[i + 1])) for i in range(0, len(parts) - 1, 2))
    return (*runs, (parts[-1], -1)), level


@dataclass
class SiteViewModel:
    """What the site screen shows and the actions it offers."""

    store: Store
    site_id: str
    errors: dict[str, str] = field(default_factory=dict)

    def status_of(self, beam_id: str) -> str:
        """Recheck status (ok, deficient, not_permitted, not_established), or 'unchecked' if incomplete."""
        try:
            return recheck(self.store.beam(beam_id)).status.value
        except ValueError:
            return "unchecked"

    def beam_rows(self) -> list[tuple[str, dict[str, Any], str]]:
        """[(beam_id, record, status)] for the site's beams, from the stored results.

        Only results made stale by a change (the beam, the site's design bases, the firm's tables)
        are rechecked (``storage.results``); the rest are read as stored. Automatic cyclic collection
        is paused while they are read (``storage.gcpause``): every row read lives on in the list.
        """
        with gc_paused():
            results.refresh(self.store.db, self.site_id)
            return results.site_list(self.store.db, self.site_id)

    def stale(self) -> bool:
        """True when a result of this site changed underneath the screen since it was read.

        A sync in its worker thread (its own connection) that brings an edit of a beam, of the site's
        design basis or of a firm table row marks the results it touches stale (storage/db.py triggers).
        """
        return results.has_stale(self.store.db, self.site_id)

    def stale_count(self) -> int:
        """How many beams opening the site will recheck first (their stored results are out of date)."""
        return results.stale_count(self.store.db, self.site_id)

    @staticmethod
    def rechecking_line(count: int, done: int = 0) -> str:
        """What the screen says while it rechecks ``count`` beams before listing them (``done`` of them so far)."""
        line = f"Rechecking {count:,} beam{'s' if count != 1 else ''} (their stored results are out of date)…"
        return line + (f"  {done:,} done" if done else "")

    @staticmethod
    def recheck_failed_line(error: str, left: int) -> str:
        """What the screen says when its background recheck failed, just before it rechecks what is left itself."""
        return (
            f"The background recheck stopped ({error}). Rechecking the {left:,} beam{'s' if left != 1 else ''} "
            "it left here: the screen may pause."
        )

    @staticmethod
    def recheck_failed_note(error: str) -> str:
        """The line kept under the counts for the visit once the screen has rechecked what the worker left."""
        return f"The background recheck stopped ({error}); this screen rechecked the rest, so the list is current."

    def groups(
        self,
        search: str = "",
        level: str = "",
        status: str = "",
        rows: list[tuple[str, dict[str, Any], str]] | None = None,
    ) -> list[tuple[str, list[tuple[str, str, str]]]]:
        """[(level, [(beam_id, 'mark  gridline', status label)])] by level, filtered.

        ``search`` matches the mark or the gridline (case-insensitive); ``level`` a level as shown;
        ``status`` a status value (ok, deficient, ...). Empty means no filter.
        """
        out: dict[str, list[tuple[str, str, str]]] = {}
        immediate = {
            d.beam_id for d in self.store.deficiencies(self.site_id, open_only=True) if d.priority == "immediate"
        }
        pinned: list[tuple[str, str, str]] = []
        needle = search.strip().lower()
        for beam_id, record, st in self.beam_rows() if rows is None else rows:
            where = str(record.get("level") or LEVEL_NOT_RECORDED)
            text = f"{record.get('mark')}  ·  grid {record.get('gridline') or '?'}"
            if needle and needle not in text.lower():
                continue
            if (level and where != level) or (status and st != status):
                continue
            out.setdefault(where, []).append((beam_id, text, status_label(st)))
            if beam_id in immediate:
                pinned.append((beam_id, f"{text}  ·  {where}", status_label(st)))
        by_level = sorted(out.items(), key=lambda group: level_key(group[0]))  # a handful of levels: no cost
        return ([(PINNED, pinned)] if pinned else []) + by_level

    @staticmethod
    def levels(rows: list[tuple[str, dict[str, Any], str]]) -> list[str]:
        """The levels the site's beams are on, as shown, in the list's order (``level_key``)."""
        return sorted({str(r.get("level") or LEVEL_NOT_RECORDED) for _, r, _ in rows}, key=level_key)

    @staticmethod
    def counts(rows: list[tuple[str, dict[str, Any], str]], shown: int | None = None) -> str:
        """'1,200 beams:  ● 800 OK  ·  ▲ 390 DEFICIENT  ·  ✖ 10 NOT ESTABLISHED' (every status that occurs).

        Each status's shape, count and words are held together by no-break spaces (``KEEP``), so a line that
        wraps breaks between statuses, never inside one ('■ 1 NOT' / 'PERMITTED' on a tablet in landscape).
        ``shown``: how many beams the search and filters leave in the list; said when it is not every beam.
        """
        tally: dict[str, int] = {}
        for _, _, st in rows:
            tally[st] = tally.get(st, 0) + 1
        parts = [
            f"{STATUS_WORDS[st][1]} {tally[st]:,} {STATUS_WORDS[st][0]}".replace(" ", KEEP)
            for st in STATUS_WORDS
            if st in tally
        ]
        if not rows:
            return "No beams logged yet."
        line = f"{len(rows):,} beams:  " + "  ·  ".join(parts)
        return line if shown is None or shown == len(rows) else f"{line}\n{shown:,} shown (search or filter)"

    @staticmethod
    def shown(groups: list[tuple[str, list[tuple[str, str, str]]]]) -> int:
        """How many beams ``groups`` lists (a pinned beam is also under its level: counted once)."""
        return sum(len(beams) for where, beams in groups if where != PINNED)

    def title(self) -> str:
        """'DEMO  ·  name  ·  address' (the address and the demo mark only when there are)."""
        site = self.store.site(self.site_id)
        return "  ·  ".join([*(["DEMO"] if site.demo else []), site.name, *([site.address] if site.address else [])])

    def unraised(self) -> list[str]:
        """'RB-7 (2 findings)' for each beam whose recheck has findings not yet raised as deficiencies.

        A finding counts as raised when the beam has an unverified deficiency of the same code at the
        same place (as ``raised_number_for`` on the beam form); read from the stored results in one query.
        """
        results.refresh(self.store.db, self.site_id)
        flagged = results.needing_action(self.store.db, self.site_id)  # not ok, not unchecked
        if not flagged:
            return []
        raised: dict[str, list[Any]] = {}
        for d in self.store.deficiencies(self.site_id):
            if d.beam_id and d.stage is not Stage.verified:
                raised.setdefault(d.beam_id, []).append(d)
        out = []
        for beam_id, mark, findings in flagged:
            mine = raised.get(beam_id, [])
            todo = [f for f in findings if not _is_raised(mine, f["code"], f["region"])]
            if todo:
                out.append(f"{mark} ({len(todo)} finding{'s' if len(todo) > 1 else ''})")
        return out

    def unraised_warning(self, tap: bool = False) -> str:
        """The warning shown on the site and notice screens ('' when every finding is raised).

        ``tap``: the site screen's band, which names at most ``UNRAISED_BAND_NAMED`` beams and says a tap shows
        the whole warning.
        """
        marks = self.unraised()
        if not marks:
            return ""
        most = UNRAISED_BAND_NAMED if tap else UNRAISED_NAMED
        more = len(marks) - most
        named = ", ".join(marks[:most]) + (f" and {more:,} more" if more > 0 else "")
        beams = f"{len(marks):,} beam{'s' if len(marks) != 1 else ''}"
        return f"▲ Findings not yet raised on {beams} (not on any notice{'; tap to read all' if tap else ''}): {named}"

    def deficiency_groups(self) -> list[tuple[str, list[tuple[str, str]]]]:
        """Open deficiencies by priority, most urgent first: [(priority label with its count, [(id, line)])].

        The count is in the heading so a reviewer knows how many there are when not all fit on screen.
        """
        out: dict[str, list[tuple[str, str]]] = {}
        for d in self.store.deficiencies(self.site_id, open_only=True):
            out.setdefault(d.priority, []).append((d.id, f"{d.number}  {d.location}  ·  {STAGE_WORDS[int(d.stage)]}"))
        return [(f"{PRIORITY_LABELS[p]} ({len(out[p])})", out[p]) for p in sorted(out, key=PRIORITY_ORDER.__getitem__)]

    @staticmethod
    def fold_label(groups: list[tuple[str, list[tuple[str, str]]]]) -> str:
        """The portrait button that opens the deficiencies: how many are open, and how many are IMMEDIATE."""
        total = sum(len(rows) for _, rows in groups)
        urgent = sum(len(rows) for label, rows in groups if label.startswith(f"{PRIORITY_LABELS['immediate']} ("))
        if not total:
            return "Open deficiencies: none…"
        # the ellipsis after the words that open the list: after the IMMEDIATE count it read as a number cut short
        return f"Open deficiencies ({total:,})…" + (f"\n{SHORT_PRIORITY['immediate']}: {urgent:,}" if urgent else "")

    def open_deficiencies(self) -> list[str]:
        """One line per open deficiency, most urgent first."""
        return [f"{d.number} [{d.priority}] {d.location}" for d in self.store.deficiencies(self.site_id, True)]

    def visit_line(self) -> str:
        """The current (latest) visit, or a prompt to start one."""
        visits = self.store.visits(self.site_id)
        if not visits:
            return "No visit started: start one before logging"
        v = visits[-1]
        return f"Visit {v.started_at} · {v.reviewer}" + (f" · {v.weather}" if v.weather else "")

    def start_visit(
        self, reviewer: str, weather: str = "", scope_reviewed: str = "", scope_not_reviewed: str = ""
    ) -> str | None:
        """Start a visit now; returns its id, or None with a message when the reviewer is missing."""
        self.errors = {}
        if not reviewer.strip():
            self.errors["reviewer"] = "reviewer: enter the name of the person doing the review"
            return None
        visit = self.store.start_visit(
            self.site_id,
            reviewer.strip(),
            time.strftime("%Y-%m-%d %H:%M %Z"),  # local time with its zone
            weather=weather.strip(),
            scope_reviewed=scope_reviewed.strip(),
            scope_not_reviewed=scope_not_reviewed.strip(),
        )
        return visit.id

    def new_beam(self) -> str:
        """Log a new beam: nothing measured yet (span, size, loads, bearings "not yet entered").

        Copying another beam's member, bracing and loads is an explicit action on the form
        (``BeamFormViewModel.copy_from``); nothing is carried over silently.
        """
        beams = self.store.beams(self.site_id)
        fields = copy.deepcopy(NEW_BEAM_DEFAULTS)
        fields["mark"] = f"NEW-{len(beams) + 1}"
        fields["site_id"] = self.site_id
        visits = self.store.visits(self.site_id)
        if visits:
            fields["visit_id"] = visits[-1].id
        beam_id = uuid7()
        self.store.save("beam", beam_id, fields)
        return beam_id

    def raise_by_hand(
        self,
        location: str,
        description: str,
        action: str,
        priority: str,
        beam_id: str | None = None,
        reference: str = "",
    ) -> str | None:
        """A reviewer's own observation as a numbered deficiency; returns its number or None with messages."""
        self.errors = {}
        for name, value in (("location", location), ("description", description), ("action", action)):
            if not value.strip():
                self.errors[name] = f"{name}: required on a deficiency"
        if priority not in PRIORITY_ORDER:
            self.errors["priority"] = f"priority {priority!r}; allowed: {', '.join(PRIORITY_ORDER)}"
        if self.errors:
            return None
        d = self.store.raise_deficiency(
            self.site_id,
            beam_id,
            "reviewer_observation",
            priority,
            location.strip(),
            description.strip(),
            reference.strip() or "reviewer's observation",
            action.strip(),
        )
        return d.number


def _is_raised(deficiencies: list[Any], code: str, region: str) -> bool:
    """True when one of a beam's unverified deficiencies has this finding's code at its place."""
    return any(d.code == code and (not region or d.location.endswith(region)) for d in deficiencies)


@dataclass
class BackgroundRecheck:
    """A site's stale results rechecked in a worker thread with its own ``Store``, so the screen keeps drawing.

    After a table correction or a sync every result of a site can be stale: 10,000 beams took 2-4 s, during
    which the screen was frozen. The worker stores ``RECHECK_PART`` beams per transaction
    (``storage.results.refresh_parts``) and says how far it is (``done`` of ``total``); ``stop`` makes it
    stop after the part under way, keeping what is stored (the rest stays stale for the next reader, which
    rechecks it). ``error`` holds why it failed, if it did: the screen's own refresh then rechecks what is
    left, so a failure here only costs time.
    """

    db_path: str
    site_id: str
    done: int = 0
    total: int = 0
    error: str = ""
    _stop: threading.Event = field(default_factory=threading.Event)
    _thread: threading.Thread | None = None

    def start(self) -> BackgroundRecheck:
        """Start the worker; returns self."""
        self._thread = threading.Thread(target=self._run, name="bracewalk-recheck", daemon=False)
        self._thread.start()
        return self

    def running(self) -> bool:
        """True while the worker is rechecking."""
        return self._thread is not None and self._thread.is_alive()

    def stop(self, wait: bool = True, timeout_s: float = 5.0) -> None:
        """Ask the worker to stop after the part under way; with ``wait``, wait up to ``timeout_s`` for it.

        Without: the screen does not wait (a part may be waiting on a sync's write lock for seconds).
        """
        self._stop.set()
        if wait and self._thread is not None:
            self._thread.join(timeout=timeout_s)

    def _run(self) -> None:
        try:
            worker = Store(self.db_path)
            try:
                for done, total in results.refresh_parts(worker.db, self.site_id, RECHECK_PART):
                    self.done, self.total = done, total
                    if self._stop.is_set():
                        break
            finally:
                worker.close()
        except (OSError, ValueError, sqlite3.Error) as exc:  # the screen's own refresh rechecks what is left
            self.error = failure_words(exc)


def failure_words(exc: OSError | ValueError | sqlite3.Error) -> str:
    """Why a background recheck stopped, in a reviewer's words with the system's own message after them.

    The site screen showed the exception's class ('OperationalError: database is locked'), which tells a
    reviewer nothing about what to do.
    """
    if isinstance(exc, sqlite3.Error):
        what = "the tablet's database was busy" if "locked" in str(exc) else "the tablet's database could not be read"
    elif isinstance(exc, OSError):
        what = "the tablet's storage could not be read or written"
    else:
        what = "a stored record could not be read"
    return f"{what}: {exc}"
