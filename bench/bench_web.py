"""How fast a confirmation reaches every screen, with the pages' own polling.

Runs the real app on waitress over loopback with the demo, then drives cue 8
"Windfall" of the next performance through the JSON API as the pages do (sign in
through the form, CSRF header, client ids), while SCREENS simulated screens poll the
way static/live.js does: every POLL_MS, the night and the followed cue in parallel.
Prints, in one run:

1. press -> every screen: for each action, the time from sending it until the last
   screen's poll returned a log id at least that of the acknowledged row (p50, p95,
   max), the figure the issue asks to stay within a second;
2. the latency of one screen's poll (the night and the cue, in parallel): p50, p99;
3. the requests per second the screens cost the server.

Bounded: one cue (about 36 actions), SCREENS screens (default 16; --screens N), about 30 s.

    python bench/bench_web.py [--screens 16]
"""

from __future__ import annotations

import argparse
import http.cookiejar
import json
import re
import statistics
import sys
import tempfile
import threading
import time
import urllib.request
from concurrent.futures import ThreadPoolExecutor
from datetime import date
from pathlib import Path

POLL_S = 0.5  # showops.web.areas.night.POLL_MS


class Device:
    """One browser: its own cookies, the CSRF token read from a page."""

    def __init__(self, base: str):
        self.base = base
        self.opener = urllib.request.build_opener(urllib.request.HTTPCookieProcessor(http.cookiejar.CookieJar()))
        self.token = ""

    def _open(self, method, path, body=None, headers=None):
        data = None if body is None else (body if isinstance(body, bytes) else json.dumps(body).encode())
        request = urllib.request.Request(self.base + path, data=data, method=method, headers=headers or {})
        try:
            with self.opener.open(request, timeout=10) as response:
                return response.status, response.read()
        except urllib.error.HTTPError as exc:
            return exc.code, exc.read()

    def sign_in(self, username: str, password: str):
        _, page = self._open("GET", "/sign-in")
        self.token = re.search(rb'name="csrf-token" content="([^"]+)"', page).group(1).decode()
        form = urllib.parse.urlencode({"csrf_token": self.token, "username": username, "password": password}).encode()
        status, _ = self._open("POST", "/sign-in", form, {"Content-Type": "application/x-www-form-urlencoded"})
        _, page = self._open("GET", "/")
        self.token = re.search(rb'name="csrf-token" content="([^"]+)"', page).group(1).decode()

    def get(self, path):
        status, body = self._open("GET", path)
        return status, json.loads(body)

    def post(self, path, body):
        status, raw = self._open("POST", path, body, {"Content-Type": "application/json", "X-CSRFToken": self.token})
        return status, json.loads(raw)


def percentile(values, q):
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(round(q / 100 * (len(ordered) - 1))))]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--screens", type=int, default=16)
    args = parser.parse_args()

    import logging

    import waitress.server

    logging.getLogger("waitress.queue").setLevel(logging.ERROR)  # depth notes would drown the figures

    from showops.store import open_db
    from showops.store.demo import build_demo
    from showops.store.users import DEMO_PASSWORD
    from showops.web import create_app

    folder = Path(tempfile.mkdtemp(prefix="showops-bench-web-"))
    db = open_db(folder)
    ids = build_demo(db, date.today()).ids
    db.conn.close()
    perf, cue = ids.performances[1], ids.cues["8"]
    app = create_app({"INSTANCE": str(folder)})
    server = waitress.server.create_server(app, host="127.0.0.1", port=0, threads=8)
    threading.Thread(target=server.run, daemon=True).start()
    base = f"http://127.0.0.1:{server.effective_port}"

    people = {u: Device(base) for u in ("halden", "margit", "fenn", "joss", "ama")}
    for name, device in people.items():
        device.sign_in(name, DEMO_PASSWORD)

    stop = threading.Event()
    seen: list[list[tuple[int, float]]] = [[] for _ in range(args.screens)]
    poll_times: list[float] = []
    requests = [0]
    lock = threading.Lock()

    def screen(i: int):
        device = Device(base)
        device.sign_in("margit", DEMO_PASSWORD)  # a screen per device; all read the same night
        with ThreadPoolExecutor(2) as pair:
            while not stop.is_set():
                t0 = time.perf_counter()
                night = pair.submit(device.get, f"/api/performances/{perf}")
                one = pair.submit(device.get, f"/api/performances/{perf}/cues/{cue}")
                last = night.result()[1]["last_log_id"]
                one.result()
                done = time.perf_counter()
                with lock:
                    poll_times.append(done - t0)
                    requests[0] += 2
                seen[i].append((last, done))
                stop.wait(max(0.0, POLL_S - (done - t0)))

    screens = [threading.Thread(target=screen, args=(i,), daemon=True) for i in range(args.screens)]
    for t in screens:
        t.start()
    time.sleep(1.5)
    started = time.perf_counter()

    path = f"/api/performances/{perf}/cues/{cue}"
    reach: list[float] = []
    n = 0

    def act(who, kind, step=None):
        nonlocal n
        n += 1
        body = {"client_id": f"bench-{n}"}
        if step:
            body["step"] = step
        t0 = time.perf_counter()
        status, answer = people[who].post(f"{path}/{kind}", body)
        if status != 200:
            raise SystemExit(f"{who} {kind} {step}: {status} {answer}")
        row_id = answer["row"]["id"]
        # wait until every screen has polled a log id at least row_id
        while True:
            firsts = [next((t for last, t in s if last >= row_id and t >= t0), None) for s in seen]
            if all(firsts):
                reach.append(max(firsts) - t0)
                return answer["cue"]
            time.sleep(0.01)

    who_by_person = {}
    state = act("halden", "start")
    for p in state["crew"]:
        for name in people:
            if p["name"].split()[0].lower() == name:
                who_by_person[p["person_id"]] = name
    # run the cue: ask each person's "next" like their screen does, press it
    for _ in range(200):
        if state["status"] == "complete":
            break
        for name, device in people.items():
            _, mine = device.get(path)
            nxt = mine.get("next")
            if nxt and nxt["action"] in ("start", "standby", "go", "confirm", "check"):
                state = act(name, nxt["action"], nxt["step"])
                break
        else:
            raise SystemExit("nobody can act and the cue is not complete")
    elapsed = time.perf_counter() - started
    stop.set()
    for t in screens:
        t.join(timeout=5)
    server.close()

    print(f"showops web bench: {args.screens} screens polling every {POLL_S * 1000:.0f} ms "
          f"(night + cue in parallel), one cue of {len(reach)} actions, {elapsed:.1f} s")
    print(f"  press -> every screen:  p50 {statistics.median(reach) * 1000:.0f} ms, "
          f"p95 {percentile(reach, 95) * 1000:.0f} ms, max {max(reach) * 1000:.0f} ms  (goal: within 1000 ms)")
    print(f"  one screen's poll:      p50 {statistics.median(poll_times) * 1000:.1f} ms, "
          f"p99 {percentile(poll_times, 99) * 1000:.1f} ms")
    print(f"  load from the screens:  {requests[0] / elapsed:.0f} requests/s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
