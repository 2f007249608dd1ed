"""A real showops server for the crash test and the bench: waitress serving the app
factory on an instance, with the invented night of lift.py for any performance id.

    python tests/live/live_server.py INSTANCE PORT [THREADS]

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


def main(instance: str, port: int, threads: int = 8) -> None:
    import waitress

    from showops.web import create_app

    lift = load_lift()
    app = create_app({"INSTANCE": instance, "LIVE_PLANS": plans_for_any_performance(lift)})
    waitress.serve(app, host="127.0.0.1", port=port, threads=threads, ident="showops-test",
                   connection_limit=200, channel_timeout=30)


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]), int(sys.argv[3]) if len(sys.argv) > 3 else 8)
