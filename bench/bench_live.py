"""Benchmark the live log over loopback against a real server (waitress, own process).

    .venv/bin/python bench/bench_live.py [--seconds 20] [--threads 8]

Prints, in one run:
 (1) show-like load: 32 devices, each polling its cue once a second and confirming a
     step every 2 s: p50/p99 latency of polls and of confirmations (goals: p99 under
     100 ms for confirmations, under 50 ms for polls), and whether any acknowledged
     confirmation was lost or duplicated;
 (2) saturation: 8 devices confirming as fast as they can: confirmations per second;
 (3) the raw SQLite commit rate (one row per transaction, WAL, synchronous=FULL) on the
     same disk, and the ratio (2)/(3) (goal: at least 0.5);
 (4) the log writer in process, no HTTP: one FULL commit per row against group commit;
 (5) the ceiling of the web stack itself on this machine: a Flask app on waitress
     (same threads) that only reads a JSON body and answers one, driven by the same
     8 client threads: requests per second, and its ratio to (3). When that ratio is
     under 0.5, no Flask app served by waitress can meet the goal of (2) here, and the
     figure to watch is (2)/(5), the share of the stack's ceiling showops keeps.

Each device is a signed-in crew member on its own performance running a solo
procedure (tests/live/live_server.py, ``bench_plans``), so every device can confirm
at its own pace through the same runner, API and log writer the crew pages use.
"""

from __future__ import annotations

import argparse
import os
import random
import sqlite3
import statistics
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests" / "live"))
from http_device import HttpDevice, Offline  # noqa: E402
from live_server import BENCH_CUES, BENCH_STEPS, PASSWORD, setup_bench_devices  # noqa: E402
from test_crash import Server, free_port  # noqa: E402


def pct(values: list[float], q: float) -> float:
    if not values:
        return float("nan")
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(round(q / 100 * (len(ordered) - 1))))]


class BenchDevice:
    """One phone: its performance's cues, started and confirmed in order."""

    def __init__(self, n: int, port: int):
        self.n = n
        self.http = HttpDevice(port, timeout=30)
        self.http.sign_in(f"dev{n}", PASSWORD)
        self.cue, self.step = 1, 0   # step 0 = the cue must be started
        self.sent = 0
        self.acked: dict[str, list[int]] = {}
        self.errors: list[str] = []
        self.lock = threading.Lock()

    def next_action(self) -> tuple[str, dict] | None:
        if self.cue > BENCH_CUES:
            return None
        base = f"/api/performances/{self.n}/cues/{self.cue}"
        self.sent += 1
        body = {"client_id": f"b{self.n}-{self.sent}"}
        if self.step == 0:
            return base + "/start", body
        body["step"] = f"Run/Step {self.step}"
        return base + "/confirm", body

    def advance(self) -> None:
        self.step += 1
        if self.step > BENCH_STEPS:
            self.cue, self.step = self.cue + 1, 0

    def confirm(self) -> float | None:
        """Send the next action (retrying offline with the same id); return its latency."""
        with self.lock:
            action = self.next_action()
            if action is None:
                return None
            path, body = action
            t0 = time.perf_counter()
            status, answer = self.http.post(path, body)
            elapsed = time.perf_counter() - t0
            if status == 200:
                self.acked[body["client_id"]] = [r["id"] for r in answer["rows"]]
                self.advance()
            else:
                self.errors.append(f"{path}: {status} {answer}")
            return elapsed

    def poll(self) -> float:
        with self.lock:
            t0 = time.perf_counter()
            status, _ = self.http.get(f"/api/performances/{self.n}/cues/{min(self.cue, BENCH_CUES)}")
            elapsed = time.perf_counter() - t0
            if status != 200:
                self.errors.append(f"poll: {status}")
            return elapsed


def show_like(devices: list[BenchDevice], seconds: float, seed: int) -> tuple[list[float], list[float]]:
    polls, confirms = [], []
    stop = time.monotonic() + seconds
    rnd = random.Random(seed)
    offsets = [(rnd.uniform(0, 1), rnd.uniform(0, 2)) for _ in devices]

    def run(device: BenchDevice, poll_at: float, confirm_at: float):
        start = time.monotonic()
        next_poll, next_confirm = start + poll_at, start + confirm_at
        while True:
            now = time.monotonic()
            if now >= stop:
                return
            if now >= next_poll:
                polls.append(device.poll())
                next_poll += 1.0
            elif now >= next_confirm:
                latency = device.confirm()
                if latency is not None:
                    confirms.append(latency)
                next_confirm += 2.0
            else:
                time.sleep(min(next_poll, next_confirm) - now)

    threads = [threading.Thread(target=run, args=(d, *o)) for d, o in zip(devices, offsets)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    return polls, confirms


def saturation(devices: list[BenchDevice], seconds: float) -> tuple[int, float, list[float]]:
    counts = [0] * len(devices)
    latencies: list[float] = []
    stop = time.monotonic() + seconds

    def run(i: int, device: BenchDevice):
        while time.monotonic() < stop:
            latency = device.confirm()
            if latency is None:
                return
            latencies.append(latency)
            counts[i] += 1

    t0 = time.monotonic()
    threads = [threading.Thread(target=run, args=(i, d)) for i, d in enumerate(devices)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    return sum(counts), time.monotonic() - t0, latencies


def cpu_seconds(pid: int) -> float:
    """User + system CPU time of a process so far (Linux /proc; proc(5): fields 14, 15)."""
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def load_average() -> str:
    try:
        return Path("/proc/loadavg").read_text().split()[0]
    except OSError:
        return "?"


def raw_commit_rate(folder: Path, seconds: float) -> float:
    """Rows per second, one INSERT per committed transaction, WAL, synchronous=FULL."""
    path = folder / "raw_commit_bench.db"
    conn = sqlite3.connect(str(path), isolation_level=None)
    conn.execute("PRAGMA journal_mode=WAL")
    conn.execute("PRAGMA synchronous=FULL")
    conn.execute("CREATE TABLE t (id INTEGER PRIMARY KEY, at TEXT, body TEXT)")
    n, stop = 0, time.monotonic() + seconds
    t0 = time.monotonic()
    while time.monotonic() < stop:
        conn.execute("BEGIN IMMEDIATE")
        conn.execute("INSERT INTO t (at, body) VALUES (?, ?)", (time.time(), "x" * 200))
        conn.execute("COMMIT")
        n += 1
    rate = n / (time.monotonic() - t0)
    conn.close()
    for suffix in ("", "-wal", "-shm"):
        Path(str(path) + suffix).unlink(missing_ok=True)
    return rate


def group_commit_rates(folder: Path, seconds: float, threads: int = 8) -> tuple[float, float, float]:
    """In-process, no HTTP: ``threads`` callers appending one log row each, as fast as
    they can, (a) each on its own connection through append_events (one FULL commit per
    row), (b) through one LogWriter (group commit). Returns (a, b, rows per batch)."""
    from showops.store import open_db
    from showops.store.log import LogWriter, append_events

    def drive(make_append) -> float:
        counts = [0] * threads
        stop = time.monotonic() + seconds

        def run(i):
            append = make_append()
            while time.monotonic() < stop:
                append([{"event": "step_confirmed", "person_id": i, "detail": {"n": counts[i]}}])
                counts[i] += 1

        t0 = time.monotonic()
        ts = [threading.Thread(target=run, args=(i,)) for i in range(threads)]
        for t in ts:
            t.start()
        for t in ts:
            t.join()
        return sum(counts) / (time.monotonic() - t0)

    own = folder / "gc-own"
    open_db(own).conn.close()
    per_commit = drive(lambda: (lambda db: (lambda events: append_events(db, events)))(open_db(own)))
    writer = LogWriter(folder / "gc-writer")
    grouped = drive(lambda: writer.append)
    per_batch = writer.units / max(1, writer.batches)
    writer.close()
    return per_commit, grouped, per_batch


def echo_app():
    """The smallest Flask app that does what a confirmation's transport does: read a
    JSON body, answer JSON (no sign-in, no log, no rules)."""
    from flask import Flask, jsonify, request

    app = Flask("showops_bench_echo")

    @app.post("/echo")
    def echo():
        data = request.get_json()
        return jsonify({"ok": True, "client_id": data.get("client_id")})

    return app


def stack_ceiling(threads: int, seconds: float, devices: int = 8) -> float:
    """Requests per second of :func:`echo_app` on waitress, ``devices`` clients as fast as they can."""
    import subprocess

    port = free_port()
    proc = subprocess.Popen([sys.executable, __file__, "--echo-server", str(port), "--threads", str(threads)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        probe = HttpDevice(port, timeout=1)
        for _ in range(400):
            try:
                if probe.post("/echo", {"client_id": "probe"})[0] == 200:
                    break
            except (Offline, ValueError):
                time.sleep(0.05)
        probe.close()
        counts = [0] * devices
        stop = time.monotonic() + seconds

        def run(i: int) -> None:
            http = HttpDevice(port, timeout=30)
            while time.monotonic() < stop:
                status, _ = http.post("/echo", {"client_id": f"e{i}-{counts[i]}", "step": "Run/Step 1"})
                if status == 200:
                    counts[i] += 1
            http.close()

        t0 = time.monotonic()
        ts = [threading.Thread(target=run, args=(i,)) for i in range(devices)]
        for t in ts:
            t.start()
        for t in ts:
            t.join()
        return sum(counts) / (time.monotonic() - t0)
    finally:
        proc.kill()
        proc.wait()


def check_log(instance: Path, devices: list[BenchDevice]) -> tuple[int, int, bool]:
    """(acknowledged, missing or duplicated, chain ok) after the run."""
    from showops.store import open_db
    from showops.store.log import verify_log

    db = open_db(instance)
    bad = 0
    acked = 0
    for device in devices:
        for cid, ids in device.acked.items():
            acked += 1
            rows = db.conn.execute("SELECT id FROM step_log WHERE client_id IN (?, ?)",
                                   (cid, cid + ":completed")).fetchall()
            if sorted(r[0] for r in rows) != sorted(ids):
                bad += 1
    dup = db.conn.execute("SELECT count(*) FROM (SELECT 1 FROM step_log WHERE event = 'step_confirmed' "
                          "GROUP BY performance_id, cue_id, step_key HAVING count(*) > 1)").fetchone()[0]
    ok = verify_log(db) is None
    db.conn.close()
    return acked, bad + dup, ok


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seconds", type=float, default=20.0, help="length of the show-like load")
    parser.add_argument("--saturation-seconds", type=float, default=10.0)
    parser.add_argument("--threads", type=int, default=8, help="waitress threads")
    parser.add_argument("--dir", default=None, help="folder for the instance (default: a temporary one)")
    parser.add_argument("--echo-server", type=int, metavar="PORT", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.echo_server:
        import waitress

        waitress.serve(echo_app(), host="127.0.0.1", port=args.echo_server, threads=args.threads, _quiet=True)
        return

    folder = Path(args.dir or tempfile.mkdtemp(prefix="showops-bench-"))
    instance = folder / "instance"
    setup_bench_devices(instance, 40)
    server = Server(instance, free_port())
    server.proc = None
    import subprocess

    server.proc = subprocess.Popen([sys.executable, str(ROOT / "tests" / "live" / "live_server.py"), str(instance),
                                    str(server.port), str(args.threads), "bench"],
                                   stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    probe = HttpDevice(server.port, timeout=1)
    for _ in range(400):
        try:
            if probe.get("/api/openapi.json")[0] == 401:  # up and answering (not signed in)
                break
        except (Offline, ValueError):
            time.sleep(0.05)
    probe.close()
    try:
        show_devices = [BenchDevice(n, server.port) for n in range(1, 33)]
        for d in show_devices[:4]:
            d.poll()  # warm the server's plan cache and connections
        load_before = load_average()
        cpu0 = cpu_seconds(server.proc.pid)
        polls, confirms = show_like(show_devices, args.seconds, seed=5)
        cpu1 = cpu_seconds(server.proc.pid)
        sat_devices = [BenchDevice(n, server.port) for n in range(33, 41)]
        cpu2 = cpu_seconds(server.proc.pid)
        done, took, sat_lat = saturation(sat_devices, args.saturation_seconds)
        cpu3 = cpu_seconds(server.proc.pid)
    finally:
        server.stop()
    raw = raw_commit_rate(folder, 3.0)
    per_commit, grouped, per_batch = group_commit_rates(folder, 3.0)
    ceiling = stack_ceiling(args.threads, 5.0)
    acked, bad, chain_ok = check_log(instance, show_devices + sat_devices)
    errors = [e for d in show_devices + sat_devices for e in d.errors]

    rate = done / took
    ms = 1000.0
    print(f"showops live bench (loopback, waitress threads={args.threads}, cpus={os.cpu_count()}, "
          f"load average before {load_before}: other work on the machine inflates every latency)")
    print(f"(1) show-like load: 32 devices, poll 1/s + confirm every 2 s, {args.seconds:.0f} s")
    print(f"    polls:         n={len(polls):5d}  p50 {pct(polls, 50) * ms:6.1f} ms  p99 {pct(polls, 99) * ms:6.1f} ms"
          f"  (goal p99 < 50 ms)")
    print(f"    confirmations: n={len(confirms):5d}  p50 {pct(confirms, 50) * ms:6.1f} ms  "
          f"p99 {pct(confirms, 99) * ms:6.1f} ms  (goal p99 < 100 ms)")
    print(f"(2) saturation: 8 devices as fast as they can: {rate:7.1f} confirmations/s "
          f"(p50 {pct(sat_lat, 50) * ms:.1f} ms, p99 {pct(sat_lat, 99) * ms:.1f} ms)")
    print(f"(3) raw SQLite, one row per commit, WAL, synchronous=FULL, same disk: {raw:7.1f} commits/s")
    print(f"    ratio (2)/(3): {rate / raw:.2f}  (goal >= 0.5)")
    print(f"(4) in-process, 8 threads appending log rows: one FULL commit per row {per_commit:7.1f} rows/s; "
          f"through the LogWriter {grouped:7.1f} rows/s ({per_batch:.1f} rows per commit)")
    print(f"(5) the web stack's ceiling here: a bare Flask app on waitress reading and answering JSON, "
          f"8 devices: {ceiling:7.1f} requests/s; (5)/(3) = {ceiling / raw:.2f}"
          + ("  (under 0.5: the goal of (2) is out of reach for any Flask app on waitress on this machine)"
             if ceiling / raw < 0.5 else ""))
    print(f"    showops keeps (2)/(5) = {rate / ceiling:.2f} of the stack's ceiling")
    print(f"log: {acked} acknowledged, {bad} lost or duplicated, chain {'verifies' if chain_ok else 'BROKEN'}, "
          f"{len(errors)} errors" + (f" (first: {errors[0]})" if errors else ""))
    print(f"server CPU: {1000 * (cpu1 - cpu0) / max(1, len(polls) + len(confirms)):.1f} ms per request under "
          f"the show-like load, {1000 * (cpu3 - cpu2) / max(1, done):.1f} ms per confirmation at saturation")
    print(f"    median poll/confirm over the run: {statistics.median(polls) * ms:.1f} / "
          f"{statistics.median(confirms) * ms:.1f} ms")


if __name__ == "__main__":
    main()
