"""Season figures counted from invented deviations and records (fixture data).

The risk-matrix placement uses the ICAO Doc 9859 4th ed. cells (from memory, see
test_risk.py); overdue means open after the due date (ISO 45001:2018 §10.2 f asks
that actions be followed to effect; the rule is this project's reading)."""

from __future__ import annotations

from datetime import date
from types import SimpleNamespace

from showops.audit.deviations import Deviation
from showops.audit.season import (ActionRef, CueRef, PerformanceRef, RecordRef, build_season,
                                  margins_from_plans)

PERFS = [PerformanceRef(1, "2026-11-20T19:30:00+00:00"), PerformanceRef(2, "2026-11-21T19:30:00+00:00")]
CUES = {10: CueRef(10, "Q4", "Orchard rises", "orchard-lift"), 11: CueRef(11, "Q9", "Bough swings", "bough-lever"),
        12: CueRef(12, "Q1", "House out", None)}


def dev(rule, pid, cid, step, rid):
    return Deviation(rule, pid, cid, step, (rid,), "2026-11-20T20:00:00+00:00", "x")


DEVS = [dev("hold", 1, 10, "Ride/Raise", 1), dev("hold", 2, 10, "Ride/Raise", 2),
        dev("refused_attempt", 2, 11, "Swing/Release", 3), dev("signoff_missing", 2, None, None, 4),
        dev("late_record", 1, 12, None, 5)]
RECS = [RecordRef(1, "near_miss", 2, 10, "Ride/Raise", "2026-11-21T20:10:00+00:00", "3B"),
        RecordRef(2, "unsafe_condition", None, None, None, "2026-11-22T10:00:00+00:00", "2D"),
        RecordRef(3, "near_miss", 1, 11, "Swing/Release", "2026-11-20T20:10:00+00:00", None)]
ACTS = [ActionRef(1, 1, "a", "o", date(2026, 11, 25), "open"), ActionRef(2, 1, "b", "o", date(2026, 12, 5), "open"),
        ActionRef(3, 2, "c", "o", date(2026, 11, 23), "done"), ActionRef(4, 2, "d", "o", date(2026, 11, 23),
                                                                       "verified")]


def season():
    return build_season(date(2026, 11, 20), date(2026, 11, 30), PERFS, CUES, DEVS, RECS, ACTS, [],
                        today=date(2026, 12, 1))


def test_counts_by_kind_rig_cue_and_step():
    s = season()
    assert s.by_kind["hold"] == 2 and s.by_kind["refused_attempt"] == 1 and s.by_kind["near_miss"] == 2
    assert s.by_kind["unsafe_condition"] == 1 and s.by_kind["incident"] == 0 and s.by_kind["self_check"] == 0
    assert sum(s.by_kind.values()) == len(DEVS) + len(RECS)
    assert s.by_rig == [("(no rig)", 2, 1), ("bough-lever", 1, 1), ("orchard-lift", 2, 1)]
    assert s.by_cue == [("Q1 House out", "(no rig)", 1, 0), ("Q4 Orchard rises", "orchard-lift", 2, 1),
                        ("Q9 Bough swings", "bough-lever", 1, 1), ("(no cue)", "(no rig)", 1, 1)]
    assert s.by_step == [("bough-lever", "Swing/Release", 1, 1), ("orchard-lift", "Ride/Raise", 2, 1)]


def test_trend_matrix_and_actions():
    s = season()
    assert [(p.id, d, r) for p, d, r in s.trend] == [(1, 2, 1), (2, 3, 1)]
    assert s.matrix["3B"] == [1] and s.matrix["2D"] == [2] and sum(map(len, s.matrix.values())) == 2
    assert [a.id for a in s.open_actions] == [3, 1, 2]
    assert [a.id for a in s.overdue_actions] == [1]          # done and verified are not overdue
    tables = s.csv_tables()
    assert tables["actions"][1][1][-1] == "yes" and tables["risk_matrix"][1][0][0] == "5A"


def test_trend_labels_name_the_time_only_when_two_performances_share_a_day():
    perfs = [PerformanceRef(1, "2026-11-21T14:00:00+00:00"), PerformanceRef(2, "2026-11-21T19:30:00+00:00"),
             PerformanceRef(3, "2026-11-22T19:30:00+00:00")]
    s = build_season(date(2026, 11, 20), date(2026, 11, 30), perfs, CUES, [], [], [], [], today=date(2026, 12, 1))
    assert s.trend_labels == ["11-21 14:00", "11-21 19:30", "11-22"]


def test_margins_from_night_plans():
    def plan(pid, usage):
        load = {"checks": [{"limit": "operator_force_per_person", "label": "pull per lifter", "usage": usage},
                           {"limit": "payload", "label": "riders", "usage": 0.5}]}
        return SimpleNamespace(performance_id=pid, cues=(
            SimpleNamespace(number="Q4", name="Orchard rises", rig="orchard-lift", load=load),
            SimpleNamespace(number="Q1", name="House out", rig=None, load=None)))
    margins = {m.limit: m for m in margins_from_plans([plan(1, 0.7), plan(2, 0.92)])}
    pull = margins["operator_force_per_person"]
    assert pull.worst_performance == 2 and pull.least_margin == 1 - 0.92
    assert pull.usage_by_performance == ((1, 0.7), (2, 0.92))
    assert margins["payload"].worst_usage == 0.5
