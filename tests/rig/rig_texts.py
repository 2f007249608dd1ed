"""Rig-file texts for the rig tests: one builder instead of a template per module.

Every figure here is invented test data; the checks that use them name their own
sources. (``tests/rig`` is on ``sys.path``: import this as ``rig_texts``.)
"""

from __future__ import annotations


def linkage_toml(*, name="test lift", a=1.0, b=1.0, h=0.5, handle_x=-1.8, handle_on="rear-bar", stroke=0.8,
                 base_mass=300, loads=(), rider_x=1.8, allowance=0, rated=200, per_person=1000,
                 stand_moment=1000, beam_axial=5000, brake_holding=3000, dynamic=1.0, extra_limits=""):
    """Return a parallel-linkage rig file; ``loads`` are (name, mass, on, x) tuples."""
    load_text = "".join(
        f'[[load]]\nname = "{n}"\nmass = {m}\non = "{on}"\nx = {x}\n' for n, m, on, x in loads)
    return f"""
kind = "parallel-linkage"
name = "{name}"
[geometry]
front_arm = {a}
rear_arm = {b}
pivot_spacing = {h}
handle_x = {handle_x}
handle_on = "{handle_on}"
stroke = {stroke}
[base]
front_x = 2.5
rear_x = -2.5
mass = {base_mass}
{load_text}
[riders]
x = {rider_x}
allowance = {allowance}
[limits]
rated_payload = {rated}
operators = 2
operator_force_per_person = {per_person}
stand_moment = {stand_moment}
beam_axial = {beam_axial}
brake_holding = {brake_holding}
dynamic_factor = {dynamic}
{extra_limits}
"""
