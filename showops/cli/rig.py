"""``showops rig ...``: solve a rig file for tonight's riders."""

from __future__ import annotations

from pathlib import Path

import click

from showops.cli import echo_caution, echo_json_with_caution, main
from showops.errors import UnitError, ValidationError
from showops.rig import load_rig, solve_rig
from showops.units import format_quantity, to_si


def parse_riders(text: str | None) -> list[float]:
    """Read ``--riders 62,55`` (kg, or with units: ``"140 lb,55 kg"``).

    :raises ValidationError: naming the rider that could not be read.
    """
    if not text or not text.strip():
        return []
    masses = []
    for i, part in enumerate(text.split(","), 1):
        try:
            masses.append(to_si(_number_or_text(part), "mass", what=f"rider {i}"))
        except UnitError:
            raise ValidationError("--riders", f"rider {i}: cannot read {part.strip()!r} as a mass "
                                              "(give masses in kg separated by commas, e.g. 62,55)") from None
    return masses


def _number_or_text(part: str):
    part = part.strip()
    try:
        return float(part)
    except ValueError:
        return part


@main.group()
def rig() -> None:
    """Rig statics: the forces a crew relies on, from a rig file."""


@rig.command("solve")
@click.argument("rig_file", type=click.Path(path_type=Path))
@click.option("--riders", help="Each rider's mass, comma-separated (kg unless a unit is given).")
@click.option("--json", "as_json", is_flag=True, help="Print the figures as JSON.")
@click.option("--imperial", is_flag=True, help="Show forces in lbf, moments in lbf·ft, lengths in ft.")
def solve(rig_file: Path, riders: str | None, as_json: bool, imperial: bool) -> None:
    """Solve RIG_FILE at the level position for these riders and check every limit.

    \b
    Example:
      showops rig solve procedures/rigs/orchard-lift.toml --riders 58,64
    """
    model = load_rig(rig_file)
    result = solve_rig(model, parse_riders(riders))
    if as_json:
        echo_json_with_caution(result.to_dict())
        return
    click.echo(render_result(result, imperial=imperial))
    echo_caution()


def render_result(result, *, imperial: bool = False) -> str:
    """Return the human-readable text of a solve (any kind with ``to_dict``)."""
    d = result.to_dict()
    if "upper_beam_axial_front_n" not in d:  # another kind renders itself
        return result.render_text(imperial=imperial)

    def f(value, dim="force"):
        return format_quantity(value, dim, imperial=imperial)

    lines = [
        f"{d['rig_name']}  (rig version {d['rig_version'][:12]})",
        f"Riders: {d['rider_count']}, {format_quantity(d['rider_mass_kg'], 'mass', imperial=imperial)} "
        f"with allowance; weight x {d['dynamic_factor']:g} (dynamic factor) in every figure below",
        "",
        f"  Operator pull, total           {f(d['operator_force_n']):>14}   (positive = pull down)",
        f"  Operator pull, per lifter      {f(d['operator_force_per_person_n']):>14}   ({d['operators']} lifters)",
        f"  Moment on the stand            {f(d['stand_moment_nm'], 'moment'):>14}   (positive = towards the platform)",
        f"  Upper beam, front / rear       {f(d['upper_beam_axial_front_n']):>14} / {f(d['upper_beam_axial_rear_n'])}   (tension +)",
        f"  Lower beam, front / rear       {f(d['lower_beam_axial_front_n']):>14} / {f(d['lower_beam_axial_rear_n'])}",
        f"  Pivot pins on the stand        {f(d['upper_pivot_horizontal_n']):>14} upper, "
        f"{f(d['lower_pivot_horizontal_n'])} lower (horizontal); {f(d['pivot_vertical_n'])} down",
        "  Handle for zero stand moment   " + (
            f"{format_quantity(d['balanced_handle_x_m'], 'length', imperial=imperial, digits=3):>14}"
            if d["balanced_handle_x_m"] is not None else "             - (handle on a beam or no pull)"),
        f"  Pull with nobody aboard        {f(d['empty_operator_force_n']):>14}   "
        + ("(negative: the empty platform rises when the brake is off)" if d["empty_operator_force_n"] < 0 else ""),
        f"  Brake holds (aboard / empty)   {f(d['brake_force_n']):>14} / {f(d['empty_brake_force_n'])}   at the rear bar",
        f"  Handle travel for the stroke   {format_quantity(d['handle_travel_m'], 'length', imperial=imperial, digits=3):>14}"
        f"   (beams swing {d['beam_swing_deg']:.1f} deg either side of level)",
        "",
        "  Stability on the casters       front        rear   margin (>= 1 passes)",
    ]
    for s in d["states"]:
        margin = "cannot tip" if s["tipping_margin"] is None else f"{s['tipping_margin']:.2f} ({s['tipping_about']})"
        lines.append(f"    {s['state']:<26} {f(s['front_reaction_n']):>11} {f(s['rear_reaction_n']):>11}   {margin}")
    lines += ["", f"Verdict: {d['verdict'].upper()}"]
    for reason in d["reasons"]:
        lines.append(f"  - [{reason['level']}] {reason['text']}")
    for note in d.get("notes", []):
        lines.append(f"  * {note}")
    return "\n".join(lines)


@rig.command("advise")
@click.argument("rig_file", type=click.Path(path_type=Path))
@click.option("--riders", required=True, help="Each rider's mass, comma-separated (kg unless a unit is given).")
@click.option("--json", "as_json", is_flag=True, help="Print the advice as JSON.")
def advise(rig_file: Path, riders: str, as_json: bool) -> None:
    """Say what to change (counterweight plates, handle position, lifters) so every
    limit of RIG_FILE holds for these riders, or that nothing does.

    \b
    Example:
      showops rig advise procedures/rigs/orchard-lift.toml --riders 58,64
    """
    from showops.rig.advisor import advise_balance

    model = load_rig(rig_file)
    advice = advise_balance(model, parse_riders(riders))
    if as_json:
        echo_json_with_caution(advice.to_dict())
        return
    click.echo(advice.text)
    if advice.result is not None and advice.changed:
        for reason in advice.result.reasons:
            click.echo(f"  - [{reason.level}] {reason.text}")
    echo_caution()


@rig.command("sweep")
@click.argument("rig_file", type=click.Path(path_type=Path))
@click.option("--riders", help="Each rider's mass, comma-separated (kg unless a unit is given).")
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False, path_type=Path),
              help="Folder for the CSV files and the plot (created if missing).")
@click.option("--points", default=201, show_default=True, type=click.IntRange(2, 100_000),
              help="Points in each sweep.")
def sweep(rig_file: Path, riders: str | None, out_dir: Path, points: int) -> None:
    """Sweep RIG_FILE (a parallel-linkage lift): pull and stand moment against handle
    position, and the frame solve over the stroke, as CSV files and a PNG plot.

    \b
    Example:
      showops rig sweep procedures/rigs/orchard-lift.toml --riders 58,64 --out sweeps/
    """
    from showops.rig import sweep as sweeps

    model = load_rig(rig_file)
    masses = parse_riders(riders)
    by_handle = sweeps.sweep_handle(model, masses, points=points)
    by_angle = sweeps.sweep_angle(model, masses, points=points)
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ValidationError("--out", f"cannot create {str(out_dir)!r} ({exc.strerror or exc})") from None
    stem = rig_file.stem
    written = [
        sweeps.write_csv(by_handle, out_dir / f"{stem}-handle.csv"),
        sweeps.write_csv(by_angle, out_dir / f"{stem}-stroke.csv"),
        sweeps.plot_sweeps(model, by_handle, by_angle, out_dir / f"{stem}-sweep.png",
                           sweeps.riders_label(masses)),
    ]
    for path in written:
        click.echo(f"wrote {path}")
    echo_caution()


@rig.command("kinds")
def kinds() -> None:
    """List the kinds of rig file showops can read (docs/rig-file.md documents each).

    \b
    Example:
      showops rig kinds
    """
    from showops.rig import KINDS

    for name in sorted(KINDS):
        click.echo(f"{name:<18} {KINDS[name].summary}")
