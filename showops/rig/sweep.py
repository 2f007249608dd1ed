"""Sweeps: the lift's figures against handle position and over the stroke.

- Against handle position (closed form, every point at once): with the handle on the
  rear bar the pull does not change and the stand moment is a straight line through
  zero at the balanced position; with the handle on a beam the pull falls as the
  handle goes back and the stand moment does not change.
- Over the stroke (the frame solver, every angle in one batched solve): pull and stand
  moment (both stay as at level, which the sweep shows) and what statics cannot give,
  the beams' axial forces, the upper beam's share of the vertical shear and the
  largest bending in the beams.

CSV files use plain SI column names; the plot (matplotlib, imported only here and
only when asked for) carries the caution on the figure.
"""

from __future__ import annotations

import csv
import textwrap
from dataclasses import dataclass
from pathlib import Path
from typing import Sequence

import numpy as np

from showops import CAUTION
from showops.errors import ShowopsError
from showops.rig.linkage import rider_weight_n
from showops.rig.linkage_frame import beam_swing_angles, solve_linkage_frame
from showops.rig.model import LinkageRig
from showops.units import STANDARD_GRAVITY


class SweepError(ShowopsError):
    """A sweep was asked of a rig it does not apply to."""


@dataclass(frozen=True)
class HandleSweep:
    """Pull and stand moment at each handle position (arrays of one length)."""

    handle_x_m: np.ndarray
    operator_force_n: np.ndarray
    operator_force_per_person_n: np.ndarray
    stand_moment_nm: np.ndarray
    current_handle_x_m: float
    balanced_handle_x_m: float | None

    columns = ("handle_x_m", "operator_force_n", "operator_force_per_person_n", "stand_moment_nm")


@dataclass(frozen=True)
class AngleSweep:
    """The frame solve at each beam angle over the stroke."""

    beam_angle_deg: np.ndarray
    platform_rise_m: np.ndarray
    operator_force_n: np.ndarray
    operator_force_per_person_n: np.ndarray
    stand_moment_nm: np.ndarray
    upper_beam_axial_front_n: np.ndarray
    upper_beam_axial_rear_n: np.ndarray
    lower_beam_axial_front_n: np.ndarray
    lower_beam_axial_rear_n: np.ndarray
    upper_shear_share_front: np.ndarray
    beam_moment_max_nm: np.ndarray

    columns = ("beam_angle_deg", "platform_rise_m", "operator_force_n", "operator_force_per_person_n",
               "stand_moment_nm", "upper_beam_axial_front_n", "upper_beam_axial_rear_n",
               "lower_beam_axial_front_n", "lower_beam_axial_rear_n", "upper_shear_share_front",
               "beam_moment_max_nm")


def _require_linkage(rig) -> LinkageRig:
    if not isinstance(rig, LinkageRig):
        raise SweepError(f"{rig.source}: a sweep runs on a parallel-linkage rig (handle position and beam "
                         f"angle); this rig is kind {rig.kind!r}")
    return rig


def handle_range(rig: LinkageRig) -> tuple[float, float]:
    """Return the handle positions to sweep: the advisor's range (or the handle) widened by 0.5 m.

    Never past -0.05 m: a handle at the pivot line would have no lever.
    """
    geo, adv = rig.geometry, rig.advisor
    lo = min(x for x in (geo.handle_x_m, adv.handle_min_x_m) if x is not None) - 0.5
    hi = max(x for x in (geo.handle_x_m, adv.handle_max_x_m) if x is not None) + 0.5
    return lo, min(hi, -0.05)


def sweep_handle(rig, rider_masses_kg: Sequence[float] = (), g: float = STANDARD_GRAVITY,
                 points: int = 201, span: tuple[float, float] | None = None) -> HandleSweep:
    """Return pull and stand moment against handle position, all points at once.

    Uses the same sums as the closed-form solve (virtual work for the pull,
    ``M = Σ F·x`` with the pull at the handle).

    :raises SweepError: for a rig that is not a parallel-linkage lift.
    :raises ValidationError: for a rider mass that is not a positive number.
    """
    rig = _require_linkage(rig)
    geo, const = rig.geometry, rig.constants
    _, rider_n = rider_weight_n(rig, rider_masses_kg, g)
    lo, hi = span or handle_range(rig)
    hx = np.linspace(lo, hi, points)
    lever_loaded = const.lever_kgm * g + rider_n * geo.front_arm_m
    loads_moment = const.moment_kgm * g + rider_n * rig.riders.x_m
    if geo.handle_on == "rear-bar":
        pull = np.full_like(hx, lever_loaded / geo.rear_arm_m)
    else:
        pull = lever_loaded / -hx
    moment = loads_moment + pull * hx
    balanced = -loads_moment / pull[0] if geo.handle_on == "rear-bar" and pull[0] > 0 else None
    return HandleSweep(hx, pull, pull / rig.limits.operators, moment, geo.handle_x_m, balanced)


def sweep_angle(rig, rider_masses_kg: Sequence[float] = (), g: float = STANDARD_GRAVITY,
                points: int = 201) -> AngleSweep:
    """Return the frame solve at ``points`` beam angles evenly over the stroke.

    :raises SweepError: for a rig that is not a parallel-linkage lift.
    """
    rig = _require_linkage(rig)
    angles = beam_swing_angles(rig, points)
    r = solve_linkage_frame(rig, rider_masses_kg, g, angles_rad=angles)
    return AngleSweep(
        beam_angle_deg=np.degrees(angles), platform_rise_m=rig.geometry.front_arm_m * np.sin(angles),
        operator_force_n=r.operator_force_n, operator_force_per_person_n=r.operator_force_n / rig.limits.operators,
        stand_moment_nm=r.stand_moment_nm, upper_beam_axial_front_n=r.upper_beam_axial_front_n,
        upper_beam_axial_rear_n=r.upper_beam_axial_rear_n, lower_beam_axial_front_n=r.lower_beam_axial_front_n,
        lower_beam_axial_rear_n=r.lower_beam_axial_rear_n, upper_shear_share_front=r.upper_shear_share_front,
        beam_moment_max_nm=r.beam_moment_max_nm)


def write_csv(sweep: HandleSweep | AngleSweep, path: Path) -> Path:
    """Write one row per point with the sweep's SI column names; return ``path``."""
    columns = [np.asarray(getattr(sweep, name)) for name in sweep.columns]
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(sweep.columns)
        for row in zip(*columns):
            writer.writerow([f"{v:.6g}" for v in row])
    return path


def plot_sweeps(rig: LinkageRig, handle: HandleSweep, angle: AngleSweep, path: Path,
                riders_label: str = "") -> Path:
    """Draw both sweeps in one PNG a person can read at arm's length; return ``path``."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    lim = rig.limits
    fig = Figure(figsize=(11, 13), dpi=100, layout="constrained")
    axes = fig.subplots(3, 1)
    fig.suptitle(f"{rig.name}: {riders_label or 'nobody aboard'} "
                 f"(riders' weight x {lim.dynamic_factor:g})", fontsize=15, fontweight="bold")
    pull_colour, moment_colour = "#1f4e9c", "#b8420f"

    def pull_and_moment(ax, x, per_person, moment, xlabel, title):
        ax.set_title(title, fontsize=13, loc="left")
        ax.plot(x, per_person, color=pull_colour, linewidth=2.5, label="pull per lifter")
        ax.axhline(lim.operator_force_per_person_n, color=pull_colour, linestyle="--", linewidth=1.2,
                   label=f"pull limit {lim.operator_force_per_person_n:.0f} N per lifter")
        ax.axhline(-lim.operator_force_per_person_n, color=pull_colour, linestyle="--", linewidth=1.2)
        ax.set_ylabel("pull per lifter, N (+ = pull down)", color=pull_colour, fontsize=11)
        ax.set_xlabel(xlabel, fontsize=11)
        ax.grid(True, alpha=0.3)
        twin = ax.twinx()
        twin.plot(x, moment, color=moment_colour, linewidth=2.5,
                  label="moment on the stand (+ = towards the platform)")
        twin.axhline(lim.stand_moment_nm, color=moment_colour, linestyle=":", linewidth=1.2,
                     label=f"stand moment limit ±{lim.stand_moment_nm:.0f} N·m")
        twin.axhline(-lim.stand_moment_nm, color=moment_colour, linestyle=":", linewidth=1.2)
        twin.axhline(0.0, color="0.4", linewidth=0.8)
        twin.set_ylabel("moment on the stand, N·m", color=moment_colour, fontsize=11)
        _same_zero(ax, twin, per_person, moment, lim.operator_force_per_person_n, lim.stand_moment_nm)
        lines = ax.get_lines() + twin.get_lines()
        ax.legend([l for l in lines if not l.get_label().startswith("_")],
                  [l.get_label() for l in lines if not l.get_label().startswith("_")],
                  loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=4, fontsize=9, frameon=False)
        return ax

    ax = pull_and_moment(axes[0], handle.handle_x_m, handle.operator_force_per_person_n, handle.stand_moment_nm,
                         "handle position x, m (negative = behind the pivot line)",
                         "Against handle position (at level)")
    ax.axvline(handle.current_handle_x_m, color="black", linewidth=1.5)
    ax.annotate(f"handle now\n{handle.current_handle_x_m:.2f} m", (handle.current_handle_x_m, 0.02),
                xycoords=("data", "axes fraction"), fontsize=10, ha="right", va="bottom",
                xytext=(-4, 0), textcoords="offset points")
    if handle.balanced_handle_x_m is not None and handle.handle_x_m[0] <= handle.balanced_handle_x_m <= handle.handle_x_m[-1]:
        ax.axvline(handle.balanced_handle_x_m, color="green", linewidth=1.5, linestyle="-.")
        ax.annotate(f"zero stand moment\n{handle.balanced_handle_x_m:.2f} m", (handle.balanced_handle_x_m, 0.98),
                    xycoords=("data", "axes fraction"), fontsize=10, ha="left", va="top", color="green",
                    xytext=(4, 0), textcoords="offset points")

    pull_and_moment(axes[1], angle.platform_rise_m, angle.operator_force_per_person_n, angle.stand_moment_nm,
                    "platform height from the level position, m (the stroke)",
                    "Over the stroke (frame solve): pull and stand moment stay as at level")

    ax = axes[2]
    ax.set_title("Over the stroke (frame solve): beam forces", fontsize=13, loc="left")
    rise = angle.platform_rise_m
    ax.plot(rise, angle.upper_beam_axial_front_n, linewidth=2.2, label="upper beam, in front of the pivot")
    ax.plot(rise, angle.upper_beam_axial_rear_n, linewidth=2.2, label="upper beam, behind the pivot")
    ax.plot(rise, angle.lower_beam_axial_front_n, linewidth=2.2, linestyle="--", label="lower beam, in front")
    ax.plot(rise, angle.lower_beam_axial_rear_n, linewidth=2.2, linestyle="--", label="lower beam, behind")
    ax.plot(rise, angle.beam_moment_max_nm, color="black", linewidth=2.2, linestyle=":",
            label="largest bending in a beam, N·m")
    ax.axhline(lim.beam_axial_n, color="red", linewidth=1.2, label=f"beam force limit ±{lim.beam_axial_n:.0f} N")
    ax.axhline(-lim.beam_axial_n, color="red", linewidth=1.2)
    ax.axhline(0.0, color="0.4", linewidth=0.8)
    ax.set_xlabel("platform height from the level position, m (the stroke)", fontsize=11)
    ax.set_ylabel("axial force, N (+ = tension); bending, N·m", fontsize=11)
    ax.grid(True, alpha=0.3)
    ax.legend(loc="best", fontsize=9, framealpha=0.9, ncol=2)

    fig.text(0.5, -0.01, "\n".join(textwrap.wrap("CAUTION: " + CAUTION, 150)), ha="center", va="top",
             fontsize=10, color="#7a0000", fontweight="bold")
    fig.savefig(path, bbox_inches="tight", pad_inches=0.3)
    return path


def _same_zero(ax, twin, left, right, left_limit, right_limit) -> None:
    """Scale both y axes so zero sits at the same height and each limit is visible.

    The two limits are drawn at different heights so their lines never overlap.
    """
    lmax = max(float(np.max(np.abs(left))) * 1.1, left_limit * 1.12)
    rmax = max(float(np.max(np.abs(right))) * 1.1, right_limit * 1.45)
    ax.set_ylim(-lmax, lmax)
    twin.set_ylim(-rmax, rmax)


def riders_label(rider_masses_kg: Sequence[float]) -> str:
    """Return e.g. ``"riders 58 + 64 kg"`` for a figure title."""
    if not rider_masses_kg:
        return ""
    return "riders " + " + ".join(f"{m:g}" for m in rider_masses_kg) + " kg"

