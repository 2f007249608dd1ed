"""The demo scenario as plain data, shared by ``showops demo`` and the tests.

Everything here is invented: Kestrel Yard Dance Company's production *The Glass
Orchard* at the Ferrier Street Drill Hall, Aldmouth; its people, their masses, the cue
list and the casting. Dates are offsets from "today" so the demo stays valid whenever
it runs: one performance already two days past, five ahead over two weekends.

What the scenario is built to show:

* ``HEAVY_PERFORMANCE``: the understudy covers the duet cue "Two in the branches";
  88 kg with a 55 kg partner plus 4 kg allowance each is 151 kg against the
  orchard lift's rated payload of 140 kg, so that cue is blocked that night only.
* ``EXPIRED_PERFORMANCE``: the spotter whose orchard-lift training has expired
  covers "Windfall", so that cue is blocked that night only.
"""

from __future__ import annotations

from dataclasses import dataclass, field

COMPANY = "Kestrel Yard Dance Company"
PRODUCTION = "The Glass Orchard"
VENUE = "Ferrier Street Drill Hall"
TOWN = "Aldmouth"

#: rig slug -> procedure slug; files procedures/rigs/<rig>.toml and procedures/<procedure>.md
RIGS: dict[str, str] = {"orchard-lift": "orchard-lift", "bough-lever": "bough-lever"}


@dataclass(frozen=True)
class DemoPerformer:
    name: str
    mass_kg: float
    rigs: tuple[str, ...]
    note: str = ""


@dataclass(frozen=True)
class DemoCrew:
    name: str
    roles: tuple[str, ...]
    #: rig -> (trained days before today, trained by, expires days after today; negative = expired)
    training: dict[str, tuple[int, str, int]] = field(default_factory=dict)


PERFORMERS: tuple[DemoPerformer, ...] = (
    DemoPerformer("Ines Marlowe", 52, ("orchard-lift", "bough-lever")),
    DemoPerformer("Tobiah Renn", 61, ("orchard-lift",)),
    DemoPerformer("Saskia Dunmore", 55, ("orchard-lift", "bough-lever")),
    DemoPerformer("Corin Achterberg", 58, ("orchard-lift",)),
    DemoPerformer("Wren Halloway", 49, ("bough-lever", "orchard-lift")),
    DemoPerformer("Mateus Oyelaran", 88, ("orchard-lift",), note="understudy for Tobiah Renn"),
    DemoPerformer("Priya Castellane", 64, (), note="dances on the floor only"),
)

UNDERSTUDY = "Mateus Oyelaran"
STAGE_MANAGER = "Halden Voss"
EXPIRED_CREW = "Rook Ellery"

_ORCHARD = "orchard-lift"
_BOUGH = "bough-lever"
CREW: tuple[DemoCrew, ...] = (
    DemoCrew("Halden Voss", ("caller",), {_ORCHARD: (90, "Lise Armitage", 275), _BOUGH: (90, "Lise Armitage", 275)}),
    DemoCrew("Margit Oduya", ("brake", "spotter"), {_ORCHARD: (80, "Halden Voss", 285), _BOUGH: (80, "Halden Voss", 285)}),
    DemoCrew("Fenn Castell", ("lifters", "brake"), {_ORCHARD: (80, "Halden Voss", 285), _BOUGH: (40, "Halden Voss", 325)}),
    DemoCrew("Joss Penhaligon", ("lifters",), {_ORCHARD: (80, "Halden Voss", 285)}),
    DemoCrew("Ama Kettering", ("lifters", "spotter"), {_ORCHARD: (80, "Halden Voss", 285)}),
    DemoCrew(EXPIRED_CREW, ("spotter", "lifters"), {_ORCHARD: (400, "Lise Armitage", -35)}),
    DemoCrew("Nell Tregarthen", ("brake", "lifters"), {_BOUGH: (60, "Halden Voss", 305)}),
    DemoCrew("Bastian Loe", ("lifters", "spotter"), {_BOUGH: (60, "Halden Voss", 305), _ORCHARD: (60, "Halden Voss", 305)}),
)


@dataclass(frozen=True)
class DemoCue:
    number: str
    name: str
    rig: str | None = None
    #: cast name -> riders; "first" rides unless a performance says otherwise
    casts: dict[str, tuple[str, ...]] = field(default_factory=dict)


CUES: tuple[DemoCue, ...] = (
    DemoCue("1", "Dust on the sill"),
    DemoCue("2", "First frost"),
    DemoCue("3", "Blossom rise", _ORCHARD, {"first": ("Corin Achterberg",), "second": ("Ines Marlowe",)}),
    DemoCue("4", "The gauze lifts"),
    DemoCue("5", "Two in the branches", _ORCHARD,
            {"first": ("Tobiah Renn", "Saskia Dunmore"), "cover": (UNDERSTUDY, "Saskia Dunmore")}),
    DemoCue("6", "Bough call", _BOUGH, {"first": ("Wren Halloway",), "second": ("Ines Marlowe",)}),
    DemoCue("7", "Orchard at noon"),
    DemoCue("8", "Windfall", _ORCHARD, {"first": ("Saskia Dunmore",), "second": ("Corin Achterberg",)}),
    DemoCue("9", "The ladder dance"),
    DemoCue("10", "Bough sway", _BOUGH, {"first": ("Ines Marlowe",), "second": ("Saskia Dunmore",)}),
    DemoCue("11", "Harvest lowering", _ORCHARD, {"first": ("Ines Marlowe",), "second": ("Saskia Dunmore",)}),
    DemoCue("12", "Last light"),
)

#: The crew of every cue on each rig, by role (the lifters are two, as the rig assumes).
CREW_BY_RIG: dict[str, dict[str, tuple[str, ...]]] = {
    _ORCHARD: {"caller": ("Halden Voss",), "brake": ("Margit Oduya",),
               "lifters": ("Fenn Castell", "Joss Penhaligon"), "spotter": ("Ama Kettering",)},
    _BOUGH: {"caller": ("Halden Voss",), "brake": ("Nell Tregarthen",),
             "lifters": ("Bastian Loe", "Fenn Castell"), "spotter": ("Margit Oduya",)},
}

#: (days from today, "HH:MM"); the first is already past.
PERFORMANCES: tuple[tuple[int, str], ...] = (
    (-2, "19:30"), (3, "19:30"), (4, "14:30"), (4, "19:30"), (10, "19:30"), (11, "19:30"),
)
PAST_PERFORMANCE = 0
#: index into PERFORMANCES: the understudy rides cue 5
HEAVY_PERFORMANCE = 3
#: index into PERFORMANCES: the spotter with expired training covers cue 8
EXPIRED_PERFORMANCE = 4

#: per performance index: cue number -> cast name (anything else rides "first")
CAST_CHANGES: dict[int, dict[str, str]] = {HEAVY_PERFORMANCE: {"5": "cover"}}
#: per performance index: (cue number, role) -> people (anything else as CREW_BY_RIG)
CREW_CHANGES: dict[int, dict[tuple[str, str], tuple[str, ...]]] = {
    EXPIRED_PERFORMANCE: {("8", "spotter"): (EXPIRED_CREW,)},
}


@dataclass(frozen=True)
class DemoIds:
    """The ids of what :func:`showops.store.show.install_demo` made, for the other areas' demo parts."""

    production_id: int
    venue_id: int
    performances: tuple[int, ...]          # in date order
    past_performance: int
    heavy_performance: int
    expired_training_performance: int
    cues: dict[str, int]                   # cue number -> id
    people: dict[str, int]                 # name -> person id
    stage_manager: int
    understudy: int
    expired_crew: int
    rigs: tuple[str, ...]                  # rig slugs installed
    skipped: tuple[str, ...] = ()          # what could not be installed, and why
