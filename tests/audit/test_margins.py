"""The season's load margins come from each night's rig loads (``store.show.night_loads``)
without building the whole night plan; they must be exactly what the night plans
(``store.show.night_plans``, the verdicts' own path) give. The figures themselves are
checked against their sources in tests/rig and tests/show; the demo is invented data
(Kestrel Yard Dance Company, *The Glass Orchard*).
"""

from __future__ import annotations

from datetime import date, timedelta

import pytest

from showops.audit.season import margins_from_plans
from showops.store import audit as store
from showops.store import show as s


@pytest.fixture
def demo(tmp_path):
    from showops.store import open_db
    from showops.store.demo import build_demo

    db = open_db(tmp_path / "instance")
    report = build_demo(db, date.today() - timedelta(days=20))
    yield db, report.ids
    db.conn.close()


def from_plans(db, ids):
    wanted = set(ids)
    return margins_from_plans(p for p in s.night_plans(db) if p.performance_id in wanted)


def test_margins_from_the_loads_are_the_night_plans_margins(demo):
    db, ids = demo
    every = list(ids.performances)
    margins = store._margins(db, every)
    assert margins == from_plans(db, every)
    # the demo's heavy night really differs, so the comparison covers more than one load
    assert any(len({u for _, u in m.usage_by_performance}) > 1 for m in margins)
    some = every[::2]
    assert store._margins(db, some) == from_plans(db, some)


def test_margins_follow_a_recast_night_and_a_new_rig_version(demo):
    db, ids = demo
    every = list(ids.performances)
    before = {(m.cue, m.limit): dict(m.usage_by_performance) for m in store._margins(db, every)}
    night, cue = ids.past_performance, db.execute(
        "SELECT cue_id FROM performance_rider WHERE performance_id = ? GROUP BY cue_id ORDER BY count(*) LIMIT 1",
        [ids.past_performance]).fetchone()[0]
    heaviest = [pid for (pid,) in db.execute("SELECT person_id FROM performer ORDER BY mass_kg DESC LIMIT 2")]
    s.cast_riders(db, night, cue, heaviest)
    slug, text = db.execute("SELECT rig_slug, text FROM rig_version ORDER BY id LIMIT 1").fetchone()
    s.add_rig(db, slug, text + "\n# a new version of the same rig\n")
    after = store._margins(db, every)
    assert after == from_plans(db, every)
    changed = {(m.cue, m.limit) for m in after if dict(m.usage_by_performance) != before.get((m.cue, m.limit))}
    assert changed and all(m.cue for m in after)
