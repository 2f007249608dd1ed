"""Crew PINs on the shared backstage tablet: only during a performance they crew.

The window (two hours before the start to five hours after) is common practice, no
source: crew are called well before the house opens and stay through the get-out.
"""

from __future__ import annotations

from datetime import datetime, timedelta

import pytest

from showops.show import demo_data
from showops.store import users as store_users
from web_helpers import alerts


def starts(db, performance_id) -> datetime:
    return datetime.fromisoformat(db.execute("SELECT starts_at FROM performance WHERE id = ?",
                                             [performance_id]).fetchone()[0])


def pin_of(made, username):
    return next(u["pin"] for u in made if u["username"] == username)


@pytest.mark.parametrize("offset, ok", [
    (timedelta(hours=-2, minutes=-1), False),
    (timedelta(hours=-2), True),
    (timedelta(minutes=-35), True),
    (timedelta(hours=3), True),
    (timedelta(hours=5), True),
    (timedelta(hours=5, minutes=1), False),
    (timedelta(hours=12), False),  # the next morning (the matinee is at 14:30)
])
def test_a_pin_works_only_in_the_window_of_a_performance_they_crew(db, demo, offset, ok):
    ids, made = demo
    perf = ids.performances[1]
    kwargs = dict(address="tablet", local_now=starts(db, perf) + offset)
    if ok:
        user, performance_id = store_users.sign_in_with_pin(db, "margit", pin_of(made, "margit"), **kwargs)
        assert (user.display_name, performance_id) == ("Margit Oduya", perf)
    else:
        with pytest.raises(store_users.PinNotValidNow):
            store_users.sign_in_with_pin(db, "margit", pin_of(made, "margit"), **kwargs)


def test_a_pin_does_not_work_for_someone_not_crewing_that_night(db, demo):
    ids, made = demo
    # Rook Ellery crews only at the expired-training performance
    other = ids.performances[1]
    assert ids.expired_crew not in [r[0] for r in db.execute(
        "SELECT person_id FROM performance_crew WHERE performance_id = ?", [other])]
    with pytest.raises(store_users.PinNotValidNow):
        store_users.sign_in_with_pin(db, "rook", pin_of(made, "rook"), address="t",
                                     local_now=starts(db, other))
    user, perf = store_users.sign_in_with_pin(db, "rook", pin_of(made, "rook"), address="t",
                                              local_now=starts(db, ids.expired_training_performance))
    assert perf == ids.expired_training_performance


def test_a_wrong_pin_is_counted_and_locks_after_five(db, demo):
    ids, made = demo
    now = starts(db, ids.performances[1])
    for _ in range(store_users.MAX_FAILURES_PER_USER):
        with pytest.raises(store_users.SignInFailed):
            store_users.sign_in_with_pin(db, "margit", "1357", address="tablet", local_now=now)
    with pytest.raises(store_users.TooManyAttempts):
        store_users.sign_in_with_pin(db, "margit", pin_of(made, "margit"), address="tablet", local_now=now)


def test_the_demo_sign_ins(db, demo):
    ids, made = demo
    roles = {u["username"]: u["role"] for u in made}
    assert roles["lise"] == "admin" and roles["halden"] == "stage_manager" and roles["odile"] == "viewer"
    crew = [u for u in made if u["role"] == "crew"]
    assert len(crew) == len(demo_data.CREW) - 1  # the stage manager is also the caller
    assert len({u["pin"] for u in crew}) == len(crew)
    halden = store_users.find_user(db, "halden")
    assert halden.person_id == ids.stage_manager
    assert store_users.sign_in_with_password(db, "joss", store_users.DEMO_PASSWORD, address="a").role == "crew"


def test_pin_page_outside_a_performance_says_why(client, demo):
    ids, made = demo
    page = client.get("/sign-in/pin").get_data(as_text=True)
    from web_helpers import read_forms
    token = read_forms(page).meta_token
    # today has no performance in the demo (the past one is two days ago, the next in three)
    response = client.post("/sign-in/pin", data={"csrf_token": token, "username": "margit",
                                                 "pin": pin_of(made, "margit")})
    assert response.status_code == 403
    assert alerts(response.get_data(as_text=True)) == [
        "a PIN works only during a performance you are crewing (from two hours before it starts); "
        "sign in with your password"]
