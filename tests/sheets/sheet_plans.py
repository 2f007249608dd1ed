"""Night plans for the crew sheet tests, built from real solves of the demo lift.

Everything named here (company, people, cues) is the invented demo scenario. The
loads are the rig solver's own results for procedures/rigs/orchard-lift.toml; the
procedure is built with showops.procedure.model as its parser would build it.
"""

from __future__ import annotations

from datetime import datetime, timezone
from pathlib import Path

from showops.procedure.model import Phase, Procedure, Step
from showops.rig import load_rig, solve_rig
from showops.show.model import Assignment, CueNight, NightPlan
from showops.verdict import Reason, verdict_of

ROOT = Path(__file__).resolve().parents[2]
RIG_FILE = ROOT / "procedures" / "rigs" / "orchard-lift.toml"

#: Invented riders and their masses (kg). The sheet must never print one of these.
MASSES = {"Wren Halloway": 57.3, "Ines Marlowe": 61.7, "Corin Achterberg": 54.6, "Saskia Dunmore": 77.9}

CREW = {"caller": ("Halden Voss",), "brake": ("Margit Oduya",),
        "lifters": ("Fenn Castell", "Joss Penhaligon"), "spotter": ("Ama Kettering",)}

PRINTED_AT = datetime(2026, 12, 11, 17, 45, tzinfo=timezone.utc)

PROCEDURE_TEXT = """\
Title: Orchard lift, one or two riders up and down
Rig: orchard-lift
Roles: caller, spotter, brake, lifters, rider
Signal: arms crossed on the chest

# Orchard lift, one or two riders up and down
Tonight {{ riders|join(" and ") }} ride; each lifter pulls about {{ load.operator_force_per_person_n|round|int }} N. Keep the area under the rear bar clear.

## Board
### Brake on, platform down
- by: brake
- check: spotter
- say: "Brake on"
- reply: "Brake on, flag red"
- sets: brake on
- why: the empty platform rises by itself when the brake is off

### Rider boards
- by: rider
- check: spotter
- needs: brake on, platform down
- sets: rider aboard, strap fastened
- say: "Rider aboard"
- reply: "Rider aboard, strap fastened"
- why: a rider steps on only onto a platform that cannot move

## Ride
### Release brake
- by: brake
- go: caller
- check: spotter
- needs: rider aboard, strap fastened, load ok
- sets: brake off
- say: "Brake off"
- reply: "Brake off, lifters holding"
- why: the lifters must hold the platform before the brake lets go

### Raise
- by: lifters
- go: caller
- needs: brake off
- sets: platform up
- hold: 20
- say: "Up"
- reply: "Platform up, rider steady"
- note: watch the rider's hands for the emergency signal all the way up

### Lower and brake on
- by: lifters
- go: caller
- check: brake
- sets: platform down, brake on
- say: "Down and braked"
- reply: "Platform down, brake on, flag red"
- why: a rider steps off only onto a platform that cannot move

### Rider steps off
- by: rider
- check: spotter
- needs: brake on, platform down
- sets: rider off, strap open
- say: "Rider off"
- reply: "Rider off, platform empty"
- why: the empty platform must stay braked

## If anything goes wrong
- phase: stop
### Hold and brake
- by: brake
- sets: brake on
- say: "Hold, brake on"
- reply: "Holding, brake on, flag red"

### Lower a rider who is unwell or stuck
- by: lifters
- go: caller
- check: spotter
- needs: brake on
- sets: platform down
- say: "Lowering"
- reply: "Platform down, rider steady"
"""


def _step(title, line, phase, number, **fields) -> Step:
    return Step(title=title, line=line, phase=phase, number=number, **fields)


def orchard_procedure() -> Procedure:
    """The demo lift's procedure, as the parser builds it from PROCEDURE_TEXT."""
    board = Phase("Board", 9, False, (
        _step("Brake on, platform down", 10, "Board", 1, by="brake", check="spotter", say="Brake on",
              reply="Brake on, flag red", sets=("brake on",),
              why="the empty platform rises by itself when the brake is off"),
        _step("Rider boards", 18, "Board", 2, by="rider", check="spotter", needs=("brake on", "platform down"),
              sets=("rider aboard", "strap fastened"), say="Rider aboard", reply="Rider aboard, strap fastened",
              why="a rider steps on only onto a platform that cannot move"),
    ))
    ride = Phase("Ride", 27, False, (
        _step("Release brake", 28, "Ride", 3, by="brake", go="caller", check="spotter",
              needs=("rider aboard", "strap fastened", "load ok"), sets=("brake off",), say="Brake off",
              reply="Brake off, lifters holding", why="the lifters must hold the platform before the brake lets go"),
        _step("Raise", 38, "Ride", 4, by="lifters", go="caller", needs=("brake off",), sets=("platform up",),
              hold_s=20.0, say="Up", reply="Platform up, rider steady",
              note="watch the rider's hands for the emergency signal all the way up"),
        _step("Lower and brake on", 47, "Ride", 5, by="lifters", go="caller", check="brake",
              sets=("platform down", "brake on"), say="Down and braked", reply="Platform down, brake on, flag red",
              why="a rider steps off only onto a platform that cannot move"),
        _step("Rider steps off", 56, "Ride", 6, by="rider", check="spotter", needs=("brake on", "platform down"),
              sets=("rider off", "strap open"), say="Rider off", reply="Rider off, platform empty",
              why="the empty platform must stay braked"),
    ))
    stop = Phase("If anything goes wrong", 65, True, (
        _step("Hold and brake", 67, "If anything goes wrong", 7, by="brake", sets=("brake on",),
              say="Hold, brake on", reply="Holding, brake on, flag red"),
        _step("Lower a rider who is unwell or stuck", 73, "If anything goes wrong", 8, by="lifters", go="caller",
              check="spotter", needs=("brake on",), sets=("platform down",), say="Lowering",
              reply="Platform down, rider steady"),
    ))
    return Procedure(title="Orchard lift, one or two riders up and down", rig="orchard-lift",
                     roles=("caller", "spotter", "brake", "lifters", "rider"), signal="arms crossed on the chest",
                     start={}, phases=(board, ride, stop), text=PROCEDURE_TEXT, source="orchard-lift.md")


RIG = load_rig(RIG_FILE)
PROCEDURE = orchard_procedure()


def rig_cue(cue_id: int, number: str, name: str, riders: tuple[str, ...], *, crew=CREW,
            extra_reasons: tuple[Reason, ...] = (), fixes: tuple[str, ...] = ()) -> CueNight:
    """A rig cue with the solver's real result for these riders (masses from MASSES)."""
    result = solve_rig(RIG, [MASSES[r] for r in riders])
    load = result.to_dict()
    reasons = tuple(result.reasons) + tuple(extra_reasons)
    assignments = tuple(Assignment(role, 100 + i * 10 + j, name)
                        for i, (role, names) in enumerate(crew.items()) for j, name in enumerate(names))
    return CueNight(cue_id=cue_id, number=number, name=name, rig="orchard-lift", rig_name=RIG.name,
                    rig_version=RIG.version, procedure_title=PROCEDURE.title, procedure_version=PROCEDURE.version,
                    riders=riders, rider_total_kg=result.rider_mass_kg, crew=assignments, load=load,
                    verdict=verdict_of(reasons), reasons=reasons, fixes=fixes, signal=PROCEDURE.signal,
                    findings=(), rule_set_version="rules-2026.1", procedure=PROCEDURE)


def make_plan(performance_id: int = 4, *, heavy: bool = False, n_rig_cues: int = 3,
              readiness: tuple[Reason, ...] = ()) -> NightPlan:
    """A performance of The Glass Orchard; with ``heavy`` the cover cast makes cue 5 blocked."""
    cues: list[CueNight] = [CueNight(cue_id=1, number="1", name="House to half")]
    pairs = [("Wren Halloway",), ("Ines Marlowe", "Corin Achterberg")]
    for i in range(n_rig_cues):
        number = str(3 + 2 * i)
        riders = pairs[i % 2]
        if heavy and number == "5":
            riders = ("Saskia Dunmore", "Ines Marlowe")
            fixes = ("bring the riders' total (with allowance) down by 8 kg to the rated payload of 140 kg",
                     "the other cast (first: Ines Marlowe, Corin Achterberg) clears the load and casting checks")
            cues.append(rig_cue(10 + i, number, f"Orchard rise {i + 1}", riders, fixes=fixes))
        else:
            cues.append(rig_cue(10 + i, number, f"Orchard rise {i + 1}", riders))
        cues.append(CueNight(cue_id=50 + i, number=f"{number}a", name=f"Lights shift {i + 1}"))
    return NightPlan(performance_id=performance_id, production="The Glass Orchard",
                     company="Kestrel Yard Dance Company", venue="Ferrier Street Drill Hall, Aldmouth",
                     starts_at=datetime(2026, 12, 12, 19, 30), stage_manager="Halden Voss",
                     cues=tuple(cues), readiness=readiness)
