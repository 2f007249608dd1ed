"""The parallel-linkage lift as plain data, in SI units.

Conventions (the rig file's): ``x`` is horizontal from the stand's pivot line,
positive towards the platform; loads are weights (mass, acting downwards).
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from functools import cached_property
from typing import Literal

#: Where a load or the handle is fixed. The lever a load has in the virtual-work
#: balance depends only on this: ``front_arm`` for the platform, ``-rear_arm`` for
#: anything rigid to the rear bar, ``x`` for anything fixed to a beam.
Mount = Literal["platform", "rear-bar", "upper-beam", "lower-beam"]
MOUNTS: tuple[Mount, ...] = ("platform", "rear-bar", "upper-beam", "lower-beam")
HandleMount = Literal["rear-bar", "upper-beam", "lower-beam"]
HANDLE_MOUNTS: tuple[HandleMount, ...] = ("rear-bar", "upper-beam", "lower-beam")

#: "EN 1990 EQU": the partial factors of EN 1990:2002 Table A1.2(A) for static
#: equilibrium (1.1 on destabilising and 0.9 on stabilising permanent actions, 1.5 on
#: destabilising variable actions, 0 on stabilising variable ones); or a plain factor
#: of safety on the stabilising over the destabilising moment.
TippingMethod = str | float
EQU = "EN 1990 EQU"


@dataclass(frozen=True)
class Geometry:
    front_arm_m: float
    rear_arm_m: float
    pivot_spacing_m: float
    handle_x_m: float
    handle_on: HandleMount
    stroke_m: float


@dataclass(frozen=True)
class Base:
    front_x_m: float
    rear_x_m: float
    mass_kg: float
    x_m: float


@dataclass(frozen=True)
class Load:
    name: str
    mass_kg: float
    on: Mount
    x_m: float
    #: True for counterweight plates: the balance advisor may change this mass.
    counterweight: bool = False


@dataclass(frozen=True)
class Riders:
    x_m: float
    allowance_kg: float


@dataclass(frozen=True)
class Limits:
    rated_payload_kg: float
    operators: int
    operator_force_per_person_n: float
    stand_moment_nm: float
    beam_axial_n: float
    brake_holding_n: float
    dynamic_factor: float
    caution_at: float
    tipping: TippingMethod
    #: where the per-person pull limit comes from, shown beside it on every output
    operator_force_source: str = ""


@dataclass(frozen=True)
class Advisor:
    """What the balance advisor may change: the plates on hand and the handle range."""

    plates_kg: tuple[float, ...] = ()
    handle_min_x_m: float | None = None
    handle_max_x_m: float | None = None
    max_operators: int | None = None
    #: spacing of the handle positions the advisor tries (the holes a handle bolts to)
    handle_step_m: float | None = None


class RigFile:
    """What every kind's rig model shares: ``text`` (the file) and ``loads``."""

    @cached_property
    def version(self) -> str:
        """The SHA-256 of the rig file's text (the rig version every record names)."""
        return hashlib.sha256(self.text.encode("utf-8")).hexdigest()

    @property
    def counterweight_kg(self) -> float:
        """The total mass of the loads marked as counterweight."""
        return sum(load.mass_kg for load in self.loads if load.counterweight)


@dataclass(frozen=True)
class LinkageRig(RigFile):
    """A parallel-linkage lift read from a rig file."""

    name: str
    geometry: Geometry
    base: Base
    loads: tuple[Load, ...]
    riders: Riders
    limits: Limits
    advisor: Advisor = field(default_factory=Advisor)
    #: the file's text and where it came from; the version is the text's hash
    text: str = ""
    source: str = "<rig>"
    kind: str = "parallel-linkage"

    @cached_property
    def constants(self):
        """The rider-independent sums of a solve, computed once (a ``LinkageConstants``)."""
        from showops.rig.linkage import linkage_constants  # the solver's module imports this one

        return linkage_constants(self)
