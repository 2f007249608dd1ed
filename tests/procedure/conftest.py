"""Fixtures for the procedure tests: a small safe procedure and rig texts.

Every procedure and rig here is invented test data.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from showops.rig import parse_rig, solve_rig

REPO = Path(__file__).resolve().parents[2]

#: A complete, safe procedure for a lift whose empty platform rises by itself.
SAFE = """\
Title: Test lift, one rider up and down
Rig: test-lift
Roles: caller, spotter, brake, lifters, rider
Signal: arms crossed on the chest

# Test lift

Each lifter pulls {{ load.operator_force_per_person_n|round|int }} N.

## Board
### Rider boards
- by: rider
- check: spotter
- needs: brake on, platform down
- sets: rider aboard, strap fastened
- why: the brake holds the platform while the rider's weight comes on
- say: "Rider secure?"
- reply: "Rider aboard, strap fastened"

## Ride
### Release brake
- by: brake
- go: caller
- check: spotter
- needs: rider aboard, strap fastened, load ok
- sets: brake off
- why: only with the rider aboard does the platform stay down

### Raise
- by: lifters
- go: caller
- needs: brake off
- sets: platform up
- why: hand over hand, steadily
- hold: 20

### Lower
- by: lifters
- go: caller
- needs: brake off, platform up
- sets: platform down
- why: the rider comes down before the brake goes on
- say: "Down"
- reply: "Platform down on the stops"

## Off
### Brake on
- by: brake
- check: spotter
- needs: platform down
- sets: brake on
- why: the empty platform would rise once the rider is off

### Rider leaves
- by: rider
- check: spotter
- needs: brake on, platform down
- sets: rider off, strap open
- why: only with the brake on and the platform down
- say: "Rider off"
- reply: "Rider off, brake on"

## Stop
- phase: stop
### Hold
- by: brake
- check: spotter
- sets: brake on
- why: the brake stops any movement first
- say: "Hold"
- reply: "Brake on, holding"

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


def linkage_rig_text(*, counterweight_kg: float, platform_kg: float = 30.0) -> str:
    """A parallel-linkage rig (invented) with this counterweight on the rear bar."""
    loads = f"""
[[load]]
name = "platform"
mass = {platform_kg}
on = "platform"
x = 1.2
"""
    if counterweight_kg > 0:
        loads += f"""
[[load]]
name = "counterweight"
mass = {counterweight_kg}
on = "rear-bar"
x = -1.5
counterweight = true
"""
    return f"""
kind = "parallel-linkage"
name = "test lift"
[geometry]
front_arm = 1.0
rear_arm = 1.5
pivot_spacing = 0.5
handle_x = -1.9
handle_on = "rear-bar"
stroke = 0.8
[base]
front_x = 2.5
rear_x = -2.5
mass = 300
x = 0
{loads}
[riders]
x = 1.3
allowance = 0
[limits]
rated_payload = 200
operators = 2
operator_force_per_person = 400
stand_moment = 5000
beam_axial = 20000
brake_holding = 5000
dynamic_factor = 1.0
"""


def solve_text(text: str, riders=(60,)):
    return solve_rig(parse_rig(text, source="<test rig>"), list(riders))


def line_of(text: str, needle: str, occurrence: int = 1) -> int:
    """The 1-based number of the ``occurrence``-th line that reads exactly ``needle``."""
    seen = 0
    for number, line in enumerate(text.splitlines(), 1):
        if line.strip() == needle:
            seen += 1
            if seen == occurrence:
                return number
    raise AssertionError(f"{needle!r} not in the text")


@pytest.fixture
def rising_rig():
    """A rig whose empty platform rises (more counterweight than platform moment)."""
    return solve_text(linkage_rig_text(counterweight_kg=60))
