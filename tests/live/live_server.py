"""A real showops server for the crash test and the bench: waitress serving the app
factory on an instance, with the invented night of lift.py for any performance id.

    python tests/live/live_server.py INSTANCE PORT [THREADS] [lift|bench]

``setup_people(instance)`` makes the people and sign-ins first (no server needed).
Not a test module; run as a separate process so it can be killed with SIGKILL.
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

PASSWORD = "orchard-rehearsal-7"  # invented, test instances only
#: username -> (app role, lift actor attribute)
PEOPLE = {"halden": ("stage_manager", "SM"), "margit": ("crew", "BRAKE"), "fenn": ("crew", "LIFTER_A"),
          "joss": ("crew", "LIFTER_B"), "ama": ("crew", "SPOTTER")}


def load_lift():
    spec = importlib.util.spec_from_file_location("server_lift_fixture", Path(__file__).with_name("lift.py"))
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def plans_for_any_performance(lift):
    def plans(db, performance_id):
        return lift.night_plan(performance_id)

    return plans


#: the bench: one solo procedure of BENCH_STEPS steps per device (no go, no check), so every
#: device can confirm at its own pace; device N is person 100+N, caller and operator of
#: cues 1..BENCH_CUES on performance N.
BENCH_STEPS = 30
BENCH_CUES = 40


def bench_plans(db, performance_id):
    from datetime import datetime, timezone

    from showops.procedure.model import Phase, Procedure, Step
    from showops.show.model import Assignment, CueNight, NightPlan

    steps = tuple(Step(title=f"Step {i}", line=i, phase="Run", number=i, by="operator", say=f"Step {i}?",
                       reply="Done") for i in range(1, BENCH_STEPS + 1))
    procedure = Procedure(title="Bench solo", rig="orchard-lift", roles=("operator", "caller"), signal=None,
                          start={"brake": "on", "platform": "down", "rider": "off", "strap": "open"},
                          phases=(Phase("Run", 1, False, steps),), text="bench solo procedure\n")
    person = 100 + performance_id
    crew = (Assignment("caller", person, f"Device {performance_id}"),
            Assignment("operator", person, f"Device {performance_id}"))
    cues = tuple(CueNight(cue_id=c, number=str(c), name=f"Bench cue {c}", rig="orchard-lift", rig_version="r" * 64,
                          procedure_version=procedure.version, crew=crew, procedure=procedure)
                 for c in range(1, BENCH_CUES + 1))
    return NightPlan(performance_id=performance_id, production="Bench", company="Bench", venue="Loopback",
                     starts_at=datetime(2026, 11, 20, 19, 30, tzinfo=timezone.utc), stage_manager=None, cues=cues)


def setup_bench_devices(instance: str | Path, count: int) -> None:
    """Add ``count`` bench devices: users ``dev1``.. with person ids 101.. (crew)."""
    from showops.store import open_db
    from showops.store import users as store_users

    db = open_db(instance)
    for n in range(1, count + 1):
        db["person"].insert({"id": 100 + n, "name": f"Device {n}"})
        store_users.add_user(db, f"dev{n}", f"Device {n}", "crew", password=PASSWORD, person_id=100 + n,
                             hash_method="pbkdf2:sha256:1000")
    db.conn.close()


def setup_people(instance: str | Path) -> None:
    """Add the invented people and their sign-ins (cheap hashes: test instances only)."""
    from showops.store import open_db
    from showops.store import users as store_users

    lift = load_lift()
    db = open_db(instance)
    for username, (role, attr) in PEOPLE.items():
        actor = getattr(lift, attr)
        db["person"].insert({"id": actor.person_id, "name": actor.name})
        store_users.add_user(db, username, actor.name, role, password=PASSWORD, person_id=actor.person_id,
                             hash_method="pbkdf2:sha256:1000")
    db.conn.close()


def main(instance: str, port: int, threads: int = 8, mode: str = "lift") -> None:
    import waitress

    from showops.web import create_app

    plans = bench_plans if mode == "bench" else plans_for_any_performance(load_lift())
    app = create_app({"INSTANCE": instance, "LIVE_PLANS": plans})
    waitress.serve(app, host="127.0.0.1", port=port, threads=threads, ident="showops-test",
                   connection_limit=200, channel_timeout=30)


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]), int(sys.argv[3]) if len(sys.argv) > 3 else 8,
         sys.argv[4] if len(sys.argv) > 4 else "lift")
