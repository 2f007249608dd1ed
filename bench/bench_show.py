"""Speed of the night's verdicts: a season of 300 performances (goal: under 1 s).

Builds the demo into a temporary instance, adds performances up to 300 with seeded
random casts (each cue's planned casts), then times ``night_plans`` (the whole season)
and ``load_night_plan`` (one night), and prints the figures and their ratio to the goal.

Run: .venv/bin/python bench/bench_show.py
"""

from __future__ import annotations

import random
import statistics
import sys
import tempfile
import time
from datetime import date, datetime, timedelta
from pathlib import Path

from showops.store import open_db, transaction
from showops.store import show as store
from showops.show.verdicts import RigSolver

SEASON = 300
GOAL_SEASON_S = 1.0
GOAL_NIGHT_S = 0.1  # one night should be a small fraction of the season


def build(folder: Path, seed: int = 7):
    rng = random.Random(seed)
    db = open_db(folder)
    ids = store.install_demo(db, date.today())
    casts = {cue_id: {r[0]: [] for r in db.execute("SELECT DISTINCT cast_name FROM cue_cast WHERE cue_id = ?", [cue_id])}
             for cue_id in ids.cues.values()}
    for cue_id, by_name in casts.items():
        for name in by_name:
            by_name[name] = [r[0] for r in db.execute(
                "SELECT person_id FROM cue_cast WHERE cue_id = ? AND cast_name = ?", [cue_id, name])]
    crew = {(r[0], r[1]): [] for r in db.execute(
        "SELECT cue_id, role FROM performance_crew WHERE performance_id = ?", [ids.performances[1]])}
    for (cue_id, role) in crew:
        crew[(cue_id, role)] = [r[0] for r in db.execute(
            "SELECT person_id FROM performance_crew WHERE performance_id = ? AND cue_id = ? AND role = ?",
            [ids.performances[1], cue_id, role])]
    start = datetime.combine(date.today() + timedelta(days=20), datetime.min.time()) + timedelta(hours=19, minutes=30)
    with transaction(db):
        for n in range(SEASON - len(ids.performances)):
            perf = store.add_performance(db, ids.production_id, ids.venue_id, start + timedelta(days=n),
                                         stage_manager_id=ids.stage_manager)
            for cue_id, by_name in casts.items():
                if by_name:
                    store.cast_riders(db, perf, cue_id, by_name[rng.choice(sorted(by_name))])
            for (cue_id, role), people in crew.items():
                store.assign_crew(db, perf, cue_id, role, people)
    return db


def timed(fn, repeat=5):
    """Median wall-clock seconds of ``repeat`` runs (and the last result)."""
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), result


def calibration_ms() -> float:
    """A fixed pure-Python workload: compare it between runs to see how busy the machine was."""
    def work():
        total = 0
        for i in range(400_000):
            total += i * i % 7
        return total
    return timed(work, repeat=5)[0] * 1000


def main() -> int:
    print(f"calibration loop: {calibration_ms():.0f} ms (higher means a busier machine)")
    with tempfile.TemporaryDirectory() as tmp:
        db = build(Path(tmp))
        n = db.execute("SELECT COUNT(*) FROM performance").fetchone()[0]
        rig_cues = db.execute("SELECT COUNT(*) FROM cue WHERE rig_slug IS NOT NULL").fetchone()[0]
        solver = RigSolver()
        season_s, plans = timed(lambda: store.night_plans(db, solver=RigSolver()), repeat=3)
        # The same without rig care's readiness records (this area's rules alone).
        real_hook = store._care_hook
        store._care_hook = lambda db, name: None
        try:
            own_s, _ = timed(lambda: store.night_plans(db, solver=RigSolver()), repeat=3)
            own_night_s, _ = timed(lambda: store.load_night_plan(db, n // 2))
        finally:
            store._care_hook = real_hook
        store.night_plans(db, solver=solver)
        night_s, _ = timed(lambda: store.load_night_plan(db, n // 2))
        verdicts = [c.verdict for p in plans for c in p.rig_cues]
        print(f"season: {n} performances x {rig_cues} rig cues = {len(verdicts)} rig-cue verdicts "
              f"({verdicts.count('blocked')} blocked, {verdicts.count('caution')} caution)")
        print(f"distinct rig solves in the season: {solver.solves}")
        care = "with rig care's readiness" if real_hook(db, "readiness_reasons") else "(rig care not installed)"
        print(f"night_plans (whole season) {care}: {season_s * 1000:.0f} ms median of 3  "
              f"goal {GOAL_SEASON_S * 1000:.0f} ms  ratio {season_s / GOAL_SEASON_S:.2f}")
        print(f"night_plans (whole season), casting and load rules only: {own_s * 1000:.0f} ms median of 3  "
              f"goal {GOAL_SEASON_S * 1000:.0f} ms  ratio {own_s / GOAL_SEASON_S:.2f}")
        print(f"load_night_plan (one night) {care}: {night_s * 1000:.1f} ms median of 5  "
              f"goal {GOAL_NIGHT_S * 1000:.0f} ms  ratio {night_s / GOAL_NIGHT_S:.2f}")
        print(f"load_night_plan (one night), casting and load rules only: {own_night_s * 1000:.1f} ms median of 5  "
              f"goal {GOAL_NIGHT_S * 1000:.0f} ms  ratio {own_night_s / GOAL_NIGHT_S:.2f}")
        db.conn.close()
    return 0 if own_s < GOAL_SEASON_S else 1


if __name__ == "__main__":
    sys.exit(main())
