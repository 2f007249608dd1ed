"""Speed of rig care's readiness over a season (300 performances, the demo's rig cues).

Builds the season of bench_show.py, adds the demo's care records, then prints:
(1) readiness_reasons for every rig cue of the season, the records read once (first
call after a change) and warm; (2) the whole season's night_plans with rig care and
without it, and the share rig care adds. Goal: rig care adds under half of the show
area's own 1 s season budget.

Run: .venv/bin/python bench/bench_care.py
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from datetime import date
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_show import build  # noqa: E402

from showops.store import care  # noqa: E402
from showops.store import show as store  # noqa: E402
from showops.show.verdicts import RigSolver  # noqa: E402

GOAL_CARE_SHARE_S = 0.5


def timed(fn, repeat=5):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> int:
    with tempfile.TemporaryDirectory() as tmp:
        db = build(Path(tmp))
        ids_perf = [r[0] for r in db.execute("SELECT id FROM performance ORDER BY starts_at")]
        # the demo ids the seed needs, rebuilt from the database
        from showops.show.demo_data import DemoIds
        people = dict((n, i) for i, n in db.execute("SELECT id, name FROM person"))
        cues = dict(db.execute("SELECT number, id FROM cue"))
        ids = DemoIds(production_id=1, venue_id=1, performances=tuple(ids_perf), past_performance=ids_perf[0],
                      heavy_performance=ids_perf[3], expired_training_performance=ids_perf[4], cues=cues,
                      people=people, stage_manager=people["Halden Voss"], understudy=people["Mateus Oyelaran"],
                      expired_crew=people["Rook Ellery"],
                      rigs=tuple(r[0] for r in db.execute("SELECT slug FROM rig ORDER BY slug")))
        for line in care.seed_demo_care(db, ids, date.today()):
            print(line)
        pairs = [(p, c) for p in ids_perf for (c,) in db.execute("SELECT id FROM cue WHERE rig_slug IS NOT NULL")]

        def every_cue():
            for perf, cue in pairs:
                care.readiness_reasons(db, perf, cue)

        def cold():
            care._SNAPSHOTS.clear()
            every_cue()

        cold_s = timed(cold)
        warm_s = timed(every_cue)
        with_s = timed(lambda: store.night_plans(db, solver=RigSolver()), repeat=3)
        real_hook = store._care_hook
        store._care_hook = lambda db, name: None
        try:
            without_s = timed(lambda: store.night_plans(db, solver=RigSolver()), repeat=3)
        finally:
            store._care_hook = real_hook
        share = with_s - without_s
        print(f"readiness for {len(pairs)} rig cues: {cold_s * 1000:.0f} ms with the records read once, "
              f"{warm_s * 1000:.0f} ms warm ({warm_s / len(pairs) * 1e6:.0f} us a cue)")
        print(f"night_plans, season of {len(ids_perf)}: {with_s * 1000:.0f} ms with rig care, "
              f"{without_s * 1000:.0f} ms without; rig care adds {share * 1000:.0f} ms  "
              f"goal {GOAL_CARE_SHARE_S * 1000:.0f} ms  ratio {share / GOAL_CARE_SHARE_S:.2f}")
        db.conn.close()
    return 0 if share < GOAL_CARE_SHARE_S else 1


if __name__ == "__main__":
    sys.exit(main())
