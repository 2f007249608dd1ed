"""Crash test: a real server (waitress serving the app factory, its own process) is
killed with SIGKILL at seeded random moments while simulated crews run whole cues from
their devices, each action with a client id, retried until answered.

After the last restart: every acknowledged action is in the log exactly once (under
the row id it was acknowledged with), no step is confirmed twice, every cue
completed, and the hash chain verifies (the CLI too). "Acknowledged means durable":
SQLite WAL with synchronous=FULL, committed before the answer (SQLite documentation,
"PRAGMA synchronous" and "Write-Ahead Logging").
"""

from __future__ import annotations

import random
import signal
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest
from click.testing import CliRunner

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE))
from http_device import HttpDevice, Offline  # noqa: E402
from live_server import PASSWORD, PEOPLE, load_lift, setup_people  # noqa: E402

sys.path.remove(str(HERE))

#: the order in which a crew runs one cue of lift.py: (username, action, step index)
SCRIPT = [("halden", "start", None), ("margit", "confirm", 0), ("ama", "check", 0), ("halden", "confirm", 1),
          ("ama", "check", 1), ("margit", "standby", 2), ("halden", "go", 2), ("margit", "confirm", 2),
          ("ama", "check", 2), ("fenn", "standby", 3), ("joss", "standby", 3), ("halden", "go", 3),
          ("fenn", "confirm", 3), ("margit", "confirm", 4), ("margit", "standby", 5), ("halden", "go", 5),
          ("margit", "confirm", 5), ("fenn", "standby", 6), ("joss", "standby", 6), ("halden", "go", 6),
          ("joss", "confirm", 6), ("margit", "confirm", 7), ("ama", "check", 7), ("halden", "confirm", 8),
          ("ama", "check", 8)]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Server:
    def __init__(self, instance: Path, port: int):
        self.instance, self.port, self.proc = instance, port, None

    def start(self, timeout: float = 20.0) -> None:
        self.proc = subprocess.Popen([sys.executable, str(HERE / "live_server.py"), str(self.instance),
                                      str(self.port), "8"], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        end = time.monotonic() + timeout
        probe = HttpDevice(self.port, timeout=1.0)
        while time.monotonic() < end:
            try:
                if probe.get("/api/openapi.json")[0] == 401:  # up and answering (not signed in)
                    probe.close()
                    return
            except (Offline, ValueError):
                time.sleep(0.05)
        probe.close()
        raise RuntimeError("the test server did not start")

    def kill(self) -> None:
        self.proc.send_signal(signal.SIGKILL)
        self.proc.wait(10)

    def stop(self) -> None:
        if self.proc and self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(10)
            except subprocess.TimeoutExpired:
                self.kill()


class Crew:
    """One crew on its own performance: five devices, running cue 3 then cue 8."""

    def __init__(self, performance_id: int, port: int, lift, deadline: float):
        self.pid, self.lift, self.deadline = performance_id, lift, deadline
        self.devices = {}
        for username in PEOPLE:
            device = HttpDevice(port, timeout=10.0)
            self.devices[username] = device
        self.acked: dict[str, list[int]] = {}
        self.retries = 0
        self.failures: list[str] = []

    def send(self, username, path, body):
        device = self.devices[username]
        while time.monotonic() < self.deadline:
            try:
                if device.token is None:
                    device.sign_in(username, PASSWORD)
                status, answer = device.post(path, body)
            except (Offline, RuntimeError, AttributeError):
                self.retries += 1
                time.sleep(0.05)
                continue
            if status >= 500 or status == 400 and "security token" in answer["error"]["message"]:
                self.retries += 1
                time.sleep(0.05)
                continue
            return status, answer
        raise TimeoutError(f"{path} never answered")

    def run(self):
        try:
            for cue in (3, 8):
                for n, (who, kind, index) in enumerate(SCRIPT):
                    cid = f"p{self.pid}-c{cue}-{n}"
                    body = {"client_id": cid}
                    if index is not None:
                        body["step"] = self.lift.STEPS[index].key
                    status, answer = self.send(who, f"/api/performances/{self.pid}/cues/{cue}/{kind}", body)
                    if status != 200:
                        self.failures.append(f"{cid} {kind}: {status} {answer}")
                        return
                    self.acked[cid] = [r["id"] for r in answer["rows"]]
        except Exception as exc:  # reported by the test
            self.failures.append(repr(exc))
        finally:
            for device in self.devices.values():
                device.close()


@pytest.mark.slow
@pytest.mark.timeout(180)
@pytest.mark.parametrize("seed", [11, 29])
def test_every_acknowledged_action_survives_sigkill_exactly_once(tmp_path, seed):
    from showops.cli import main
    from showops.store import open_db
    from showops.store.log import verify_log

    rnd = random.Random(seed)
    instance = tmp_path / "instance"
    setup_people(instance)
    server = Server(instance, free_port())
    server.start()
    lift = load_lift()
    deadline = time.monotonic() + 90
    crews = [Crew(p, server.port, lift, deadline) for p in range(1, 5)]
    threads = [threading.Thread(target=c.run) for c in crews]
    kills = 0
    try:
        for t in threads:
            t.start()
        while kills < 5 and any(t.is_alive() for t in threads):
            # Short gaps: on a quiet machine four crews finish their script in a few
            # seconds, and every kill must land while requests are still coming.
            time.sleep(rnd.uniform(0.05, 0.4))
            server.kill()
            kills += 1
            time.sleep(rnd.uniform(0.0, 0.2))
            server.start()
        for t in threads:
            t.join(100)
    finally:
        server.stop()
    assert not [f for c in crews for f in c.failures], [f for c in crews for f in c.failures]
    assert kills >= 3 and sum(c.retries for c in crews) > 0, "the kills hit no request: nothing was tested"

    db = open_db(instance)
    try:
        for crew in crews:
            assert len(crew.acked) == 2 * len(SCRIPT)
            for cid, ids in crew.acked.items():
                rows = db.conn.execute("SELECT id FROM step_log WHERE client_id = ? OR client_id = ?",
                                       (cid, cid + ":completed")).fetchall()
                assert sorted(r[0] for r in rows) == sorted(ids), cid
        twice = db.conn.execute("SELECT performance_id, cue_id, step_key, count(*) FROM step_log "
                                "WHERE event IN ('step_confirmed', 'check_confirmed', 'go', 'cue_started') "
                                "GROUP BY performance_id, cue_id, step_key, event HAVING count(*) > 1").fetchall()
        assert twice == []
        assert db.conn.execute("SELECT count(*) FROM step_log WHERE event = 'cue_completed'").fetchone()[0] == 8
        assert db.conn.execute("SELECT count(*) FROM step_log WHERE event = 'refused'").fetchone()[0] == 0
        assert verify_log(db) is None
    finally:
        db.conn.close()
    result = CliRunner().invoke(main, ["log", "verify", "--instance", str(instance)])
    assert result.exit_code == 0, result.output
