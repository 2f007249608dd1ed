"""store.live.KeptStates: the cue states a long-running service keeps between attempts.

The reference here is the definition of a cue's state: a replay of its log rows from
the start (``runner.replay``). A service that keeps its states must decide every
attempt exactly as a service that replays each time, and show the same cue; when
another connection writes, or a transaction is rolled back under it, it must notice.
"""

from __future__ import annotations

import random
from datetime import datetime, timedelta, timezone

import pytest

from showops.live.runner import Action
from showops.store import live as svc
from showops.store import open_db
from showops.store.log import iter_log

T0 = datetime(2026, 11, 20, 19, 30, tzinfo=timezone.utc)
CUES = ((1, 3), (1, 5), (1, 8), (2, 3), (2, 5), (2, 8))


def kept_service(lift):
    """One service for the whole test, plans cached: the path the web app's writer takes."""
    return svc.Live(plans=lift.plans, cache_ttl_s=3600)


def outcome_of(call):
    try:
        out = call()
    except svc.RefusedAttempt as exc:
        return ("refused", exc.code, str(exc)), None
    return ("ok", tuple(r["event"] for r in out.rows)), out


def PEOPLE(lift):  # noqa: N802 (a constant of the fixture module)
    return [lift.SM, lift.BRAKE, lift.LIFTER_A, lift.LIFTER_B, lift.SPOTTER, lift.STRANGER]


def random_session(lift, seed: int, n: int):
    """``n`` attempts on the rig cues of the invented nights (performance 2's cue 5 is
    blocked): mostly what a screen offers its person next, some taps at random (wrong
    step, wrong person, HOLD, resume, end)."""
    rnd = random.Random(seed)
    people = PEOPLE(lift)
    keys = [s.key for s in lift.STEPS]
    for i in range(n):
        performance, cue = rnd.choice(CUES)
        yield performance, cue, rnd.choice(people), rnd, keys, i


@pytest.mark.parametrize("seed", [3, 17, 2026])
def test_a_kept_service_decides_and_shows_exactly_what_a_replay_does(tmp_path, lift, seed):
    kept_db, fresh_db = open_db(tmp_path / "kept"), open_db(tmp_path / "fresh")
    service = kept_service(lift)
    accepted = refused = 0
    for performance, cue, actor, rnd, keys, i in random_session(lift, seed, 400):
        now = T0 + timedelta(seconds=3 * i)
        offers = []
        for person in rnd.sample(PEOPLE(lift), 6):
            offer = svc.cue_status(fresh_db, performance, cue, person_id=person.person_id, plans=lift.plans,
                                   now=now)["next"]
            if offer and offer["action"] != "wait":
                offers.append((person, offer))
        if offers and rnd.random() < 0.85:
            actor, offer = offers[0]
            kind, key = offer["action"], offer["step"]
        else:
            kind = rnd.choice(("start", "standby", "go", "confirm", "check", "hold", "resume", "end", "confirm"))
            key = rnd.choice(keys)
        action = Action(kind, actor, key, client_id=f"s{seed}-{i}")
        got, out = outcome_of(lambda: service.act(kept_db, performance, cue, action, now=now, view=True))
        want, _ = outcome_of(lambda: svc._action(kind, fresh_db, performance, cue, actor, key,
                                                 client_id=f"s{seed}-{i}", now=now, plans=lift.plans))
        assert got == want, f"attempt {i}: {kind} {key} by {actor.name} on cue {cue} of performance {performance}"
        if out is not None:
            accepted += 1
            # a HOLD from a screen showing a still cue stops the running one: its rows say which
            shown_cue = out.rows[0]["cue_id"]
            replayed = svc.cue_status(fresh_db, performance, shown_cue, person_id=actor.person_id, plans=lift.plans,
                                      now=now)
            assert out.view == replayed, f"attempt {i}: the kept cue differs from its replay"
        else:
            refused += 1
    # the session must have exercised both paths, and the service must have kept its states
    assert accepted > 60 and refused > 20
    # each cue replayed once, and again after its start reloads the plan (fresh=True)
    assert service.kept.replays <= 2 * len(CUES)
    strip = lambda rows: [{k: v for k, v in r.items() if k not in ("hash", "prev_hash")} for r in rows]  # noqa: E731
    assert strip(iter_log(kept_db)) == strip(iter_log(fresh_db))


def test_rows_another_connection_appends_are_caught_up_not_missed(tmp_path, lift):
    db = open_db(tmp_path / "i")
    other = open_db(tmp_path / "i")
    service = kept_service(lift)
    first = lift.STEPS[0].key
    service.act(db, 1, 3, Action("start", lift.SM), now=T0)
    # the CLI (another connection) records the brake step of the same cue
    svc.confirm_step(other, 1, 3, lift.BRAKE, first, plans=lift.plans, now=T0 + timedelta(seconds=4))
    replays = service.kept.replays
    with pytest.raises(svc.RefusedAttempt) as info:
        service.act(db, 1, 3, Action("confirm", lift.BRAKE, first), now=T0 + timedelta(seconds=6))
    assert info.value.code == "already_done"
    out = service.act(db, 1, 3, Action("check", lift.SPOTTER, first), now=T0 + timedelta(seconds=8), view=True)
    assert out.view["steps"][0]["status"] == "checked"
    assert service.kept.replays == replays  # applied the new rows, did not replay the cue


def test_a_rolled_back_attempt_is_forgotten(tmp_path, lift):
    db = open_db(tmp_path / "i")
    service = kept_service(lift)
    first = lift.STEPS[0].key
    service.act(db, 1, 3, Action("start", lift.SM), now=T0)
    db.conn.execute("BEGIN IMMEDIATE")  # the attempt joins this transaction ...
    service.act(db, 1, 3, Action("confirm", lift.BRAKE, first), now=T0 + timedelta(seconds=2))
    db.conn.execute("ROLLBACK")  # ... which is then rolled back (a failed batch commit)
    out = service.act(db, 1, 3, Action("confirm", lift.BRAKE, first), now=T0 + timedelta(seconds=5), view=True)
    assert [r["event"] for r in out.rows] == ["step_confirmed"]
    assert out.view["steps"][0]["confirmed_at"] == "2026-11-20T19:30:05.000+00:00"


def test_a_new_night_plan_replays_the_cue_under_it(tmp_path, lift):
    db = open_db(tmp_path / "i")
    kept = svc.KeptStates()
    plan_a, plan_b = lift.night_plan(1), lift.night_plan(1, blocked_cue=True)
    kept.sync(db)
    assert kept.get(db, plan_a, 5).setup.verdict != "blocked"
    assert kept.get(db, plan_a, 5) is kept.get(db, plan_a, 5)
    assert kept.get(db, plan_b, 5).setup.verdict == "blocked"
    assert kept.replays == 2


def test_the_kept_states_are_bounded(tmp_path, lift):
    db = open_db(tmp_path / "i")
    kept = svc.KeptStates(size=2)
    plan = lift.night_plan(1)
    kept.sync(db)
    for cue in (3, 5, 8, 3):
        kept.get(db, plan, cue)
    assert kept.replays == 4  # cue 3 was pushed out by 5 and 8, so it is replayed again
