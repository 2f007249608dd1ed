"""The figures of the season audit, computed from deviations and records (pure).

Everything here is counted from what the log and the records hold; nothing is
typed in. The PDF (``sheets/audit.py``), the CSV files and the web pages all render
one :class:`SeasonAudit`, so they show the same figures.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from datetime import date
from functools import cached_property
from operator import itemgetter
from typing import Any, Iterable, Mapping, Sequence

from showops.audit.deviations import RULES, Deviation
from showops.audit.records import KINDS, is_overdue
from showops.audit.risk import MATRIX

NO_RIG = "(no rig)"
NO_CUE = "(no cue)"


@dataclass(frozen=True)
class PerformanceRef:
    """A performance as the audit names it."""

    id: int
    starts_at: str          # ISO 8601
    label: str = ""

    @property
    def day(self) -> str:
        return self.starts_at[:10]


@dataclass(frozen=True)
class CueRef:
    """A cue as the audit names it (``rig`` is the rig slug or None)."""

    id: int
    number: str
    name: str
    rig: str | None = None


@dataclass(frozen=True)
class RecordRef:
    """An incident, near miss or unsafe condition, as counted."""

    id: int
    kind: str
    performance_id: int | None
    cue_id: int | None
    step_key: str | None
    occurred_at: str
    cell: str | None = None          # "3B" once classified
    status: str = "open"
    title: str = ""


@dataclass(frozen=True)
class ActionRef:
    """A corrective action, as counted."""

    id: int
    record_id: int
    description: str
    owner: str
    due: date
    state: str


@dataclass(frozen=True)
class Margin:
    """How close one rig cue came to one limit across the run."""

    cue: str                 # "Q12 Orchard rises"
    rig: str
    limit: str
    label: str
    usage_by_performance: tuple[tuple[int, float], ...]   # (performance id, figure / limit)

    @cached_property
    def _worst(self) -> tuple[int, float]:
        # the first night with the highest usage (one pass, the key read in C)
        return max(self.usage_by_performance, key=itemgetter(1))

    @property
    def worst_usage(self) -> float:
        return self._worst[1]

    @property
    def worst_performance(self) -> int:
        return self._worst[0]

    @cached_property
    def least_margin(self) -> float:
        """1 - worst usage: the share of the limit left on the closest night."""
        return 1.0 - self.worst_usage


@dataclass
class SeasonAudit:
    """Every figure of the season audit."""

    date_from: date
    date_to: date
    performances: list[PerformanceRef]
    by_kind: dict[str, int]
    by_rig: list[tuple[str, int, int]]                  # rig, deviations, records
    by_cue: list[tuple[str, str, int, int]]             # cue label, rig, deviations, records
    by_step: list[tuple[str, str, int, int]]            # rig, step key, deviations, records
    trend: list[tuple[PerformanceRef, int, int]]        # performance, deviations, records
    margins: list[Margin]
    open_actions: list[ActionRef]
    overdue_actions: list[ActionRef]
    matrix: dict[str, list[int]]                        # cell -> record ids
    deviations: list[Deviation] = field(default_factory=list)

    @property
    def trend_labels(self) -> list[str]:
        """A short name for each point of the trend: its day (``MM-DD``), with the time
        when two performances share that day (a matinee and an evening)."""
        days = [p.day for p, _, _ in self.trend]
        return [p.day[5:] + (" " + p.starts_at[11:16] if days.count(p.day) > 1 else "")
                for p, _, _ in self.trend]
    records: list[RecordRef] = field(default_factory=list)

    @property
    def total_deviations(self) -> int:
        return len(self.deviations)

    @property
    def total_records(self) -> int:
        return len(self.records)

    def csv_tables(self) -> dict[str, tuple[list[str], list[list[Any]]]]:
        """Return file stem -> (header, rows): the CSV files of ``showops audit --csv``."""
        perf = {p.id: p for p in self.performances}
        return {
            "counts_by_kind": (["kind", "title", "count"],
                               [[k, _kind_title(k), n] for k, n in self.by_kind.items()]),
            "counts_by_rig": (["rig", "deviations", "records"], [list(r) for r in self.by_rig]),
            "counts_by_cue": (["cue", "rig", "deviations", "records"], [list(r) for r in self.by_cue]),
            "counts_by_step": (["rig", "step", "deviations", "records"], [list(r) for r in self.by_step]),
            "trend": (["performance_id", "starts_at", "deviations", "records"],
                      [[p.id, p.starts_at, d, r] for p, d, r in self.trend]),
            "load_margins": (["cue", "rig", "limit", "label", "performance_id", "starts_at", "usage", "margin"],
                             [[m.cue, m.rig, m.limit, m.label, pid, perf[pid].starts_at if pid in perf else "",
                               round(u, 4), round(1 - u, 4)]
                              for m in self.margins for pid, u in m.usage_by_performance]),
            "actions": (["id", "record_id", "description", "owner", "due", "state", "overdue"],
                        [[a.id, a.record_id, a.description, a.owner, a.due.isoformat(), a.state,
                          "yes" if a in self.overdue_actions else "no"] for a in self.open_actions]),
            "risk_matrix": (["cell", "region", "records", "record_ids"],
                            [[cell, MATRIX[cell], len(ids), " ".join(map(str, ids))]
                             for cell, ids in self.matrix.items()]),
            "deviations": (["key", "rule", "performance_id", "cue_id", "step_key", "at_utc", "row_ids", "text"],
                           [[d.key, d.rule, d.performance_id, d.cue_id, d.step_key, d.at_utc,
                             " ".join(map(str, d.row_ids)), d.text] for d in self.deviations]),
            "records": (["id", "kind", "performance_id", "cue_id", "step_key", "occurred_at", "cell", "status"],
                        [[r.id, r.kind, r.performance_id, r.cue_id, r.step_key, r.occurred_at, r.cell or "",
                          r.status] for r in self.records]),
        }


def _kind_title(kind: str) -> str:
    if kind in RULES:
        return RULES[kind][0]
    return KINDS[kind][0] if kind in KINDS else kind


def cue_label(cue: CueRef | None) -> str:
    return f"{cue.number} {cue.name}".strip() if cue else NO_CUE


def build_season(date_from: date, date_to: date, performances: Sequence[PerformanceRef],
                 cues: Mapping[int, CueRef], deviations: Sequence[Deviation], records: Sequence[RecordRef],
                 actions: Iterable[ActionRef], margins: Sequence[Margin], *, today: date) -> SeasonAudit:
    """Count everything for the performances in the period.

    :param deviations: already limited to ``performances``.
    :param records: already limited to the period.
    :param actions: every action of those records.
    """
    by_kind = dict.fromkeys(list(RULES) + list(KINDS), 0)
    rig_dev, rig_rec = Counter(), Counter()
    cue_dev, cue_rec = Counter(), Counter()
    step_dev, step_rec = Counter(), Counter()
    perf_dev, perf_rec = Counter(), Counter()

    def rig_of(cue_id):
        cue = cues.get(cue_id) if cue_id is not None else None
        return (cue.rig or NO_RIG) if cue else NO_RIG

    for d in deviations:
        by_kind[d.rule] += 1
        rig = rig_of(d.cue_id)
        rig_dev[rig] += 1
        cue_dev[d.cue_id] += 1
        if d.step_key:
            step_dev[(rig, d.step_key)] += 1
        perf_dev[d.performance_id] += 1
    for r in records:
        by_kind[r.kind] = by_kind.get(r.kind, 0) + 1
        rig = rig_of(r.cue_id)
        rig_rec[rig] += 1
        cue_rec[r.cue_id] += 1
        if r.step_key:
            step_rec[(rig, r.step_key)] += 1
        if r.performance_id is not None:
            perf_rec[r.performance_id] += 1

    rigs = sorted(set(rig_dev) | set(rig_rec))
    cue_ids = sorted(set(cue_dev) | set(cue_rec), key=lambda c: (c is None, _cue_sort(cues.get(c))))
    steps = sorted(set(step_dev) | set(step_rec))
    matrix: dict[str, list[int]] = {cell: [] for cell in MATRIX}
    for r in records:
        if r.cell:
            matrix[r.cell].append(r.id)
    action_list = sorted(actions, key=lambda a: (a.due, a.id))
    open_actions = [a for a in action_list if a.state != "verified"]
    overdue = [a for a in action_list if is_overdue(a.state, a.due, today)]
    return SeasonAudit(
        date_from=date_from, date_to=date_to, performances=list(performances), by_kind=by_kind,
        by_rig=[(rig, rig_dev[rig], rig_rec[rig]) for rig in rigs],
        by_cue=[(cue_label(cues.get(c)) if c is not None else NO_CUE, rig_of(c), cue_dev[c], cue_rec[c])
                for c in cue_ids],
        by_step=[(rig, key, step_dev[(rig, key)], step_rec[(rig, key)]) for rig, key in steps],
        trend=[(p, perf_dev[p.id], perf_rec[p.id]) for p in performances],
        margins=list(margins), open_actions=open_actions, overdue_actions=overdue, matrix=matrix,
        deviations=list(deviations), records=list(records))


def _cue_sort(cue: CueRef | None):
    if cue is None:
        return (1, 0, "")
    digits = "".join(ch for ch in cue.number if ch.isdigit())
    return (0, int(digits) if digits else 0, cue.number)


def margins_from_plans(plans: Iterable[Any]) -> list[Margin]:
    """Collect each rig cue's limit usage across nights from the night plans.

    :param plans: :class:`showops.show.model.NightPlan` objects; each rig cue's
        ``load`` is the rig solver's ``to_dict()`` with its ``checks`` (``limit``,
        ``label``, ``usage``).
    """
    return margins_from_loads((plan.performance_id, f"{cue.number} {cue.name}".strip(), cue.rig, cue.load)
                              for plan in plans for cue in plan.cues)


def margins_from_loads(loads: Iterable[tuple[int, str, str | None, Mapping[str, Any] | None]]) -> list[Margin]:
    """Collect each rig cue's limit usage across nights.

    :param loads: ``(performance id, cue label, rig slug, load)`` in night order, where
        ``load`` is the rig solver's ``to_dict()`` (its ``checks``, each with ``limit``,
        ``label`` and ``usage``) or None; a cue with no rig or no load is skipped. A
        season repeats the same few loads (one per rig version and riders' masses): pass
        the same dict for equal loads and its checks are read once.
    """
    series: dict[tuple[str, str, str], list] = {}      # (cue, rig, limit) -> [label, points]
    # (cue, rig, id(load)) -> (load, [(series entry, label, usage)]): a cue's nights with an
    # equal load only append their points
    bound: dict[tuple[str, str, int], tuple[Mapping, list]] = {}
    for pid, cue, rig, load in loads:
        if not rig or not load:
            continue
        found = bound.get((cue, rig, id(load)))
        if found is None or found[0] is not load:
            entries = []
            for c in load.get("checks", ()):
                if c.get("usage") is None:
                    continue
                entry = series.get((cue, rig, c["limit"]))
                if entry is None:
                    entry = series[(cue, rig, c["limit"])] = ["", []]
                entries.append((entry, c.get("label") or c["limit"], float(c["usage"])))
            found = bound[(cue, rig, id(load))] = (load, entries)
        for entry, label, usage in found[1]:
            entry[0] = label
            entry[1].append((pid, usage))
    return [Margin(cue, rig, limit, label, tuple(points)) for (cue, rig, limit), (label, points) in series.items()]
