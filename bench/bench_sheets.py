"""Crew sheet speed: one performance with 12 rig cues (goal < 0.5 s) and a run of
8 performances (goal < 3 s). Prints the figures and their ratio to the goals.

Plans are built as the tests build them (tests/sheets/sheet_plans.py): real solves of
procedures/rigs/orchard-lift.toml and a six-step procedure with a two-step stop phase.
Times are the best of several runs (wall clock and this process's CPU time, which is
what counts on a busy machine).

Run: .venv/bin/python bench/bench_sheets.py
"""

from __future__ import annotations

import io
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "sheets"))

import pypdf  # noqa: E402

from sheet_plans import PRINTED_AT, make_plan  # noqa: E402
from showops.sheets import render_crew_sheet  # noqa: E402

ONE_GOAL_S = 0.5
RUN_GOAL_S = 3.0


def best(func, repeat: int) -> tuple[float, float]:
    """Return the best wall time and the best CPU time of ``repeat`` calls."""
    walls, cpus = [], []
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        func()
        walls.append(time.perf_counter() - w0)
        cpus.append(time.process_time() - c0)
    return min(walls), min(cpus)


def main() -> None:
    one = make_plan(1, heavy=True, n_rig_cues=12)
    run = [make_plan(i + 1, heavy=(i == 3), n_rig_cues=6) for i in range(8)]
    pdf = render_crew_sheet(one, printed_at=PRINTED_AT)  # warm up imports and font metrics
    pages = len(pypdf.PdfReader(io.BytesIO(pdf)).pages)
    wall, cpu = best(lambda: render_crew_sheet(one, printed_at=PRINTED_AT), 5)
    print(f"one performance, 12 rig cues ({pages} pages, {len(pdf) / 1024:.0f} KiB): "
          f"wall {wall:.3f} s, cpu {cpu:.3f} s; goal {ONE_GOAL_S} s, ratio {cpu / ONE_GOAL_S:.2f}")
    run_pages = sum(len(pypdf.PdfReader(io.BytesIO(render_crew_sheet(p, printed_at=PRINTED_AT))).pages) for p in run)
    wall, cpu = best(lambda: [render_crew_sheet(p, printed_at=PRINTED_AT) for p in run], 3)
    print(f"8 performances, 6 rig cues each ({run_pages} pages): wall {wall:.3f} s, cpu {cpu:.3f} s; "
          f"goal {RUN_GOAL_S} s, ratio {cpu / RUN_GOAL_S:.2f}")
    print("ratio < 1 meets the goal")


if __name__ == "__main__":
    main()
