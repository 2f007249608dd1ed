"""Rig statics benchmark: prints figures and ratios (run: python bench/bench_rig.py).

On the demo's lift (procedures/rigs/orchard-lift.toml, two riders) it times:
- the closed-form solve (goal: under 50 µs a solve);
- this project's frame solver on the lift's frame model, and PyNiteFEA (a general
  frame library, test dependency) building and solving the same model (goal: ours at
  least 20 times faster);
- a 1,000-point sweep: over the stroke with the batched frame solver, and against
  handle position with the closed form (goal: under 20 ms).
First it times a fixed numpy workload (10,000 batched 12 x 12 solves; about 18 ms on
an idle machine of the CI kind, per shared/CI.md) and a bare Python call, so figures
from a busy machine can be read against them. Times are the best of several repeats.
"""

from __future__ import annotations

import sys
import timeit
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests" / "rig"))   # the PyNite model builder the tests use

from showops.rig import load_rig  # noqa: E402
from showops.rig.frame import solve_frame  # noqa: E402
from showops.rig.linkage import rider_weight_n, solve_linkage  # noqa: E402
from showops.rig.linkage_frame import (beam_swing_angles, build_linkage_frame,  # noqa: E402
                                       solve_linkage_frame)
from showops.rig.sweep import sweep_handle  # noqa: E402
from showops.units import STANDARD_GRAVITY  # noqa: E402

RIDERS = (58.0, 64.0)


def best(func, number: int, repeat: int = 5) -> float:
    """Return the best time per call, in seconds."""
    return min(timeit.repeat(func, number=number, repeat=repeat)) / number


def main() -> None:
    rig = load_rig(ROOT / "procedures" / "rigs" / "orchard-lift.toml")
    _, rider_n = rider_weight_n(rig, RIDERS, STANDARD_GRAVITY)
    frame = build_linkage_frame(rig, rider_n)

    rng = np.random.default_rng(1)
    a = rng.random((10_000, 12, 12)) + 12 * np.eye(12)
    b = rng.random((10_000, 12, 1))
    calib = best(lambda: np.linalg.solve(a, b), 3)
    print(f"machine: 10,000 batched 12x12 solves      {calib * 1e3:8.1f} ms   (about 18 ms idle, shared/CI.md)")
    call = best(lambda: None, 200_000)
    print(f"machine: one bare Python call              {call * 1e9:8.1f} ns   (the closed form is Python-bound)")

    closed = best(lambda: solve_linkage(rig, RIDERS), 2000)
    print(f"closed form, one solve                     {closed * 1e6:8.1f} µs   (goal < 50 µs)")

    ours = best(lambda: solve_frame(frame.model), 200)
    dof = 3 * len(frame.model.node_names)
    print(f"frame solver, lift model ({len(frame.model.members)} members, {dof} freedoms) {ours * 1e6:8.1f} µs")
    try:
        from rig_references import solve_with_pynite
    except ImportError:  # PyNiteFEA is a test dependency
        print("PyNiteFEA not installed: pip install -e '.[test]' for the ratio")
    else:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            pynite = best(lambda: solve_with_pynite(frame.model), 3, repeat=3)
        print(f"PyNiteFEA, same model (build and solve)    {pynite * 1e3:8.1f} ms")
        print(f"ratio PyNite / ours                        {pynite / ours:8.1f} x   (goal >= 20 x)")

    angles = beam_swing_angles(rig, 1000)
    stroke = best(lambda: solve_linkage_frame(rig, RIDERS, angles_rad=angles, frame=frame), 3)
    print(f"sweep over the stroke, 1,000 angles (frame) {stroke * 1e3:7.1f} ms   (goal < 20 ms)")
    handle = best(lambda: sweep_handle(rig, RIDERS, points=1000), 200)
    print(f"sweep against handle, 1,000 points (closed) {handle * 1e3:7.3f} ms   (goal < 20 ms)")


if __name__ == "__main__":
    main()
