"""An invented lift procedure built from the model (fixtures for the runner tests).

Not imported as a test module (no ``test_`` prefix); tests load it with
``importlib`` through the ``lift`` fixture in conftest.
"""

from __future__ import annotations

from showops.live.runner import Actor, Crew, CueSetup
from showops.procedure.model import Phase, Procedure, Step


def _step(n, phase, title, **kw):
    return Step(title=title, line=n * 5, phase=phase, number=n, **kw)


STEPS = (
    _step(1, "Board", "Brake on", by="brake", check="spotter", needs=("platform down",), sets=("brake on",),
          say="Brake?", reply="Brake on, flag red"),
    _step(2, "Board", "Rider boards", by="rider", check="spotter", needs=("brake on", "platform down"),
          sets=("rider aboard", "strap fastened"), say="Rider, strap?", reply="Strap fastened, ready"),
    _step(3, "Lift", "Release the brake", by="brake", go="caller", check="spotter",
          needs=("rider aboard", "strap fastened", "load ok"), sets=("brake off",)),
    _step(4, "Lift", "Lift", by="lifters", go="caller", needs=("brake off",), sets=("platform up",), hold_s=90),
    _step(5, "Lift", "Hold and brake", by="brake", sets=("brake on",)),
    _step(6, "Lower", "Release for lowering", by="brake", go="caller", needs=("platform up",), sets=("brake off",)),
    _step(7, "Lower", "Lower", by="lifters", go="caller", needs=("brake off",), sets=("platform down",)),
    _step(8, "Lower", "Brake on to disembark", by="brake", check="spotter", needs=("platform down",),
          sets=("brake on",)),
    _step(9, "Disembark", "Rider leaves", by="rider", check="spotter", needs=("brake on", "platform down"),
          sets=("rider off", "strap open")),
)

PROCEDURE = Procedure(
    title="Invented test lift", rig="orchard-lift", roles=("caller", "brake", "lifters", "spotter", "rider"),
    signal="arms crossed", start={"brake": "on", "platform": "down", "rider": "off", "strap": "open"},
    phases=tuple(Phase(name, i, False, tuple(s for s in STEPS if s.phase == name))
                 for i, name in enumerate(("Board", "Lift", "Lower", "Disembark"))),
    text="invented test procedure\n")

# invented people
SM = Actor(1, "Halden Voss", frozenset({"stage_manager"}), "prompt-desk")
BRAKE = Actor(2, "Margit Oduya", frozenset({"crew"}), "phone-2")
LIFTER_A = Actor(3, "Fenn Castell", frozenset({"crew"}), "phone-3")
LIFTER_B = Actor(4, "Joss Penhaligon", frozenset({"crew"}), "phone-4")
SPOTTER = Actor(5, "Ama Kettering", frozenset({"crew"}), "phone-5")
STRANGER = Actor(6, "Rook Ellery", frozenset({"crew"}), "phone-6")
VIEWER = Actor(7, "Inspector", frozenset({"viewer"}), "tablet")

CREW = (Crew("caller", 1, SM.name), Crew("brake", 2, BRAKE.name), Crew("lifters", 3, LIFTER_A.name),
        Crew("lifters", 4, LIFTER_B.name), Crew("spotter", 5, SPOTTER.name))


def setup(**kw) -> CueSetup:
    values = dict(performance_id=1, cue_id=3, number="3", name="Blossom rise", steps=PROCEDURE.main_steps,
                  crew=CREW, start=PROCEDURE.start, procedure_version=PROCEDURE.version, rig_version="r" * 64)
    values.update(kw)
    return CueSetup(**values)


def night_plan(performance_id: int = 1, *, blocked_cue: bool = False):
    """An invented night: cue 3 and cue 8 on the lift, cue 5 blocked when asked, cue 1 no rig."""
    from datetime import datetime, timezone

    from showops.show.model import Assignment, CueNight, NightPlan
    from showops.verdict import Reason

    crew = tuple(Assignment(c.role, c.person_id, c.name) for c in CREW)

    def rig_cue(cue_id, number, name, **kw):
        return CueNight(cue_id=cue_id, number=number, name=name, rig="orchard-lift", rig_name="Orchard lift",
                        rig_version="r" * 64, procedure_title=PROCEDURE.title, procedure_version=PROCEDURE.version,
                        riders=("Corin Achterberg",), crew=crew, procedure=PROCEDURE, **kw)

    reason = Reason("riders 151 kg over the rated payload 140 kg", limit="payload", value=151, allowed=140,
                    fix="cast the first pair")
    cues = (CueNight(cue_id=1, number="1", name="Dust on the sill"),
            rig_cue(3, "3", "Blossom rise"),
            rig_cue(5, "5", "Two in the branches",
                    **({"verdict": "blocked", "reasons": (reason,), "fixes": ("cast the first pair",)}
                       if blocked_cue else {})),
            rig_cue(8, "8", "Windfall"))
    return NightPlan(performance_id=performance_id, production="The Glass Orchard",
                     company="Kestrel Yard Dance Company", venue="Ferrier Street Drill Hall",
                     starts_at=datetime(2026, 11, 20, 19, 30, tzinfo=timezone.utc), stage_manager=SM.name,
                     cues=cues)


def plans(db, performance_id):
    """A plan loader for the service: performance 1 ordinary, performance 2 with a blocked cue."""
    from showops.errors import NotFound

    if performance_id not in (1, 2):
        raise NotFound(f"no performance {performance_id}")
    return night_plan(performance_id, blocked_cue=performance_id == 2)
