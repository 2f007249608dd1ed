"""Rig statics (pure: no Flask, click or sqlite).

``load_rig`` reads a rig file of any registered kind; ``solve_rig`` solves it for a
list of riders. Importing this package registers the kinds that ship.
"""

from __future__ import annotations

from typing import Sequence

from showops.rig import frame_rig  # noqa: F401  (registers "frame")
from showops.rig import linkage  # noqa: F401  (registers "parallel-linkage")
from showops.rig.kinds import KINDS, RigResult
from showops.rig.loader import load_rig, parse_rig
from showops.units import STANDARD_GRAVITY


def solve_rig(rig, rider_masses_kg: Sequence[float] = (), g: float = STANDARD_GRAVITY) -> RigResult:
    """Solve ``rig`` (any kind) for riders of these masses (kg, before the allowance).

    :raises ValidationError: for a rider mass that is not a positive number.
    """
    return KINDS[rig.kind].solve(rig, rider_masses_kg, g)


__all__ = ["KINDS", "RigResult", "load_rig", "parse_rig", "solve_rig"]
