"""The same frames solved by general-purpose reference libraries (test-only).

- PyNiteFEA (``Pynite``): a 3D frame analysis library; a plane frame is a 3D frame with
  the out-of-plane freedoms held at every node. Its conventions, checked on a
  cantilever: reactions are the supports' forces on the frame (as ours); member axial
  force is positive in compression; ``Mz`` is about the member's local z axis and, with
  that axis along +Z, positive where ours (sagging positive) is negative.
- anaStruct 1.7.0: a 2D frame library; hinges are rotational springs of zero
  stiffness at an element's end. Its node results report the force on the support
  (the opposite sign of ours); axial force is positive in tension. Its 1.7.0 release
  changes which element end gets a hinge with the order elements are added and makes
  a member pinned at one end too stiff, so only statically determinate figures are
  compared with it.
"""

from __future__ import annotations

import warnings

import numpy as np

from showops.rig.frame import FrameModel


def solve_with_pynite(model: FrameModel, coords=None):
    """Return (reactions (n, 3), displacements (n, 3), member end axial/moment) from PyNite.

    ``axial`` and ``moment`` are ``(members, 2)`` at the start and end, converted to our
    conventions (tension positive, sagging positive).
    """
    from Pynite import FEModel3D

    coords = np.asarray(model.coords_m if coords is None else coords, dtype=float)
    fe = FEModel3D()
    names = [f"N{i}" for i in range(len(model.node_names))]
    for name, (x, y) in zip(names, coords):
        fe.add_node(name, float(x), float(y), 0.0)
    # rotation freedoms no member stiffens (every member pinned there) are held, as our
    # solver leaves them out
    stiff_rot = set()
    for mb in model.members:
        if not mb.release_start:
            stiff_rot.add(mb.start)
        if not mb.release_end:
            stiff_rot.add(mb.end)
    held = {s.node: s for s in model.supports}
    for i, name in enumerate(names):
        s = held.get(i)
        fe.def_support(name, bool(s and s.ux), bool(s and s.uy), True, True, True,
                       bool(s and s.rz) or i not in stiff_rot)
    for k, mb in enumerate(model.members):
        fe.add_material(f"mat{k}", mb.e_pa, mb.e_pa / 2.6, 0.3, 0.0)
        fe.add_section(f"sec{k}", mb.area_m2, mb.inertia_m4, mb.inertia_m4, mb.inertia_m4)
        fe.add_member(f"M{k}", names[mb.start], names[mb.end], f"mat{k}", f"sec{k}")
        if mb.release_start or mb.release_end:
            fe.def_releases(f"M{k}", Rzi=mb.release_start, Rzj=mb.release_end)
    for load in model.node_loads:
        if load.fx_n:
            fe.add_node_load(names[load.node], "FX", load.fx_n)
        if load.fy_n:
            fe.add_node_load(names[load.node], "FY", load.fy_n)
        if load.mz_nm:
            fe.add_node_load(names[load.node], "MZ", load.mz_nm)
    for load in model.point_loads:
        if load.fx_n:
            fe.add_member_pt_load(f"M{load.member}", "FX", load.fx_n, load.position_m)
        if load.fy_n:
            fe.add_member_pt_load(f"M{load.member}", "FY", load.fy_n, load.position_m)
    for load in model.uniform_loads:
        if load.wy_n_per_m:
            fe.add_member_dist_load(f"M{load.member}", "FY", load.wy_n_per_m, load.wy_n_per_m)
        if load.wx_n_per_m:
            fe.add_member_dist_load(f"M{load.member}", "FX", load.wx_n_per_m, load.wx_n_per_m)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fe.analyze_linear()
    combo = "Combo 1"
    reactions = np.array([[fe.nodes[n].RxnFX[combo], fe.nodes[n].RxnFY[combo], fe.nodes[n].RxnMZ[combo]]
                          for n in names])
    displacements = np.array([[fe.nodes[n].DX[combo], fe.nodes[n].DY[combo], fe.nodes[n].RZ[combo]]
                              for n in names])
    axial = np.zeros((len(model.members), 2))
    moment = np.zeros((len(model.members), 2))
    for k in range(len(model.members)):
        member = fe.members[f"M{k}"]
        length = member.L()
        axial[k] = [-member.axial(0.0, combo), -member.axial(length, combo)]
        # PyNite's Mz is about the member's local z axis, which it may point along -Z
        # for some member directions; ours is about +Z, sagging positive.
        local_z = np.asarray(member.T())[2, :3]
        sign = -1.0 if local_z[2] > 0 else 1.0
        moment[k] = [sign * member.moment("Mz", 0.0, combo), sign * member.moment("Mz", length, combo)]
    return reactions, displacements, axial, moment


def solve_with_anastruct(model: FrameModel):
    """Return (reactions (n, 3) as forces on the frame, axial (members,)) from anaStruct 1.7.0.

    Only nodal loads are passed (the linkage carries no member loads). Hinges become
    zero-stiffness rotational springs at the element end.
    """
    from anastruct import SystemElements

    ss = SystemElements()
    coords = np.asarray(model.coords_m, dtype=float)
    element_ids = []
    for mb in model.members:
        spring = {}
        if mb.release_start:
            spring[1] = 0
        if mb.release_end:
            spring[2] = 0
        element_ids.append(ss.add_element([list(coords[mb.start]), list(coords[mb.end])],
                                          EA=mb.e_pa * mb.area_m2, EI=mb.e_pa * mb.inertia_m4,
                                          spring=spring or None))
    node_id = {}
    for i, (x, y) in enumerate(coords):
        node_id[i] = ss.find_node_id([float(x), float(y)])
    for s in model.supports:
        if s.ux and s.uy and s.rz:
            ss.add_support_fixed(node_id[s.node])
        elif s.ux and s.uy:
            ss.add_support_hinged(node_id[s.node])
        elif s.uy:
            ss.add_support_roll(node_id[s.node], direction="x")   # free along x: holds y
        else:
            ss.add_support_roll(node_id[s.node], direction="y")
    for load in model.node_loads:
        ss.point_load(node_id[load.node], Fx=load.fx_n, Fy=load.fy_n)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ss.solve()
    reactions = np.zeros((len(coords), 3))
    for s in model.supports:
        r = ss.get_node_results_system(node_id[s.node])
        reactions[s.node] = [-r["Fx"], -r["Fy"], -r["Tz"]]
    axial = np.array([ss.get_element_results(e)["Nmax"] for e in element_ids])
    return reactions, axial
