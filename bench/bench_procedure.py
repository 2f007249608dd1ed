"""Benchmark: check a 200-step procedure, the stop phase run from every reached state.

Goal (issue 3): under 50 ms. Prints the median and best of repeated runs, the parse
and check split, the number of distinct states the stop phase was run from, and the
ratio to the goal. Run: .venv/bin/python bench/bench_procedure.py
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

from showops.procedure import check_procedure, parse_procedure
from showops.procedure.check import CheckRun, Physics
from showops.rig import load_rig, solve_rig

GOAL_MS = 50.0
REPO = Path(__file__).resolve().parents[1]

HEADER = """Title: Bench lift, many cycles
Rig: orchard-lift
Roles: caller, spotter, brake, lifters, rider
Signal: arms crossed on the chest

# Bench lift

Each lifter pulls {{ load.operator_force_per_person_n|round|int }} N; brake {{ crew.brake }}.
"""

CYCLE = """## Cycle {n}
### Rider boards {n}
- by: rider
- check: spotter
- needs: brake on, platform down
- sets: rider aboard, strap fastened
- why: the brake holds the platform while the rider's weight comes on

### Release brake {n}
- by: brake
- go: caller
- check: spotter
- needs: rider aboard, strap fastened, load ok
- sets: brake off
- why: only with the rider aboard does the platform stay down

### Raise {n}
- by: lifters
- go: caller
- needs: brake off
- sets: platform up
- why: hand over hand, steadily

### Brake on at height {n}
- by: brake
- check: spotter
- needs: platform up
- sets: brake on
- why: the brake holds the rider through the scene

### Release to lower {n}
- by: brake
- go: caller
- check: spotter
- needs: platform up, rider aboard, load ok
- sets: brake off
- why: the rider's weight brings the platform down under control

### Lower {n}
- by: lifters
- go: caller
- needs: brake off, platform up
- sets: platform down
- why: the rider comes down before the brake goes on

### Brake on {n}
- by: brake
- check: spotter
- needs: platform down
- sets: brake on
- why: the empty platform would rise once the rider is off

### Rider leaves {n}
- by: rider
- check: spotter
- needs: brake on, platform down
- sets: rider off, strap open
- why: only with the brake on and the platform down
- say: "Rider off"
- reply: "Rider off, brake on, platform down"

"""

STOP = """## Stop
- phase: stop
### Hold
- by: brake
- check: spotter
- sets: brake on
- why: the brake stops any movement first
### Release to lower the rider
- by: brake
- go: caller
- check: spotter
- needs: platform up, rider aboard, load ok
- sets: brake off
- why: a rider who is unwell comes down under control
### Lower the rider
- by: lifters
- go: caller
- needs: brake off, platform up
- sets: platform down
- why: the rider is safest at the bottom
### Brake on again
- by: brake
- check: spotter
- needs: brake off, platform down
- sets: brake on
- why: before the rider's weight comes off
### Help the rider off
- by: spotter
- check: caller
- needs: brake on, platform down, rider aboard
- sets: rider off, strap open
- why: only with the brake on and the platform down
- say: "Rider off, lift safe"
- reply: "Rider off, brake on, platform down"
"""


def build(steps: int = 200) -> str:
    cycles = steps // 8
    return HEADER + "".join(CYCLE.format(n=n) for n in range(1, cycles + 1)) + STOP


def timed(func, repeats: int) -> tuple[list[float], list[float]]:
    """Wall-clock and CPU milliseconds of each run (CPU time is steadier on a busy machine)."""
    wall, cpu = [], []
    for _ in range(repeats):
        started, started_cpu = time.perf_counter(), time.process_time()
        func()
        wall.append((time.perf_counter() - started) * 1000.0)
        cpu.append((time.process_time() - started_cpu) * 1000.0)
    return wall, cpu


def main() -> int:
    text = build(200)
    result = solve_rig(load_rig(REPO / "procedures" / "rigs" / "orchard-lift.toml"), [58, 64])
    proc = parse_procedure(text, source="bench.md")
    findings = check_procedure(proc, rig_result=result)
    if findings:
        print("the bench procedure should be clean; it has findings:")
        for f in findings[:5]:
            print("  " + f.format("bench.md"))
        return 1
    run = CheckRun(proc, Physics.from_result(result))
    distinct = {tuple(sorted(s.items())) for s, _ in run.reached}
    repeats = 50
    parse_ms = timed(lambda: parse_procedure(text, source="bench.md"), repeats)
    check_ms = timed(lambda: check_procedure(proc, rig_result=result), repeats)
    both_ms = timed(lambda: check_procedure(parse_procedure(text, source="bench.md"), rig_result=result), repeats)
    print(f"procedure: {len(proc.main_steps)} main steps, {len(proc.stop_steps)} stop steps, "
          f"{len(text.splitlines())} lines; stop phase run from {len(run.reached)} reached states "
          f"({len(distinct)} distinct)")
    for name, (wall, cpu) in (("parse", parse_ms), ("check", check_ms), ("parse + check", both_ms)):
        print(f"  {name:<14} wall median {statistics.median(wall):7.2f} ms, best {min(wall):7.2f} ms;"
              f"   CPU median {statistics.median(cpu):7.2f} ms")
    for name, (wall, cpu) in (("check", check_ms), ("parse + check", both_ms)):
        median = statistics.median(cpu)
        print(f"goal: {name} under {GOAL_MS:.0f} ms: CPU median is {median / GOAL_MS:.2f} of the goal "
              f"({'met' if median < GOAL_MS else 'NOT met'}); wall median {statistics.median(wall) / GOAL_MS:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
