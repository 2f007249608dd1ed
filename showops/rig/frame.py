"""A plane frame solver by the direct stiffness method (pure numpy).

Nodes carry three degrees of freedom (``ux``, ``uy``, ``rz``). A member is a straight
Euler-Bernoulli beam-column with Young's modulus ``E``, area ``A`` and second moment
``I``; either end may be pinned (a moment release), handled by static condensation
of that end's rotation out of the member's stiffness and fixed-end forces. Supports
fix any of a node's three freedoms. Loads are forces and moments at nodes, point
forces at a distance along a member, and uniform forces per metre of a member, all
given in global axes (``x`` horizontal, ``y`` up).

Everything is vectorised over the members and over a batch of geometries (the same
machine at a thousand beam angles). In a batch, members whose length and direction do
not change (a lift's bracket and arms as the beams swing) are assembled once and the
freedoms only they touch are condensed out once; the rest is solved for the whole
batch by a Cholesky factorisation, which is also the check for a mechanism (a pivot
that vanishes after scaling to a unit diagonal). Reactions come from the member end
forces by node equilibrium. The model is plain data (:class:`FrameModel`); solving
never changes it, so a stale result cannot be read after a change.

Sign conventions of the results: reactions are the forces of the supports on the
frame in global axes; member end forces are in member axes (``x`` from the start
node to the end node), as forces of the nodes on the member; along a member the axial
force is positive in tension, the shear positive when the resultant on the part
before the section points along member ``+y``, and the bending moment positive when
it sags (the member's ``+y`` face in compression, as for a beam drawn left to right).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from showops.errors import ShowopsError

#: Relative pivot below which the stiffness matrix is taken as singular: the frame can
#: move without straining (a mechanism). After diagonal scaling a sound frame's smallest
#: pivot is many orders larger; rounding on a true mechanism leaves about 1e-16.
MECHANISM_PIVOT = 1e-10

DOF_NAMES = ("horizontal", "vertical", "rotation")


class FrameModelError(ShowopsError):
    """A frame cannot be solved: a mechanism, a loose node, a load on nothing."""


@dataclass(frozen=True)
class Member:
    """A straight member from node ``start`` to node ``end`` (indices)."""

    name: str
    start: int
    end: int
    e_pa: float
    area_m2: float
    inertia_m4: float
    release_start: bool = False
    release_end: bool = False


@dataclass(frozen=True)
class Support:
    """Which of a node's freedoms are held: horizontal, vertical, rotation."""

    node: int
    ux: bool = True
    uy: bool = True
    rz: bool = False


@dataclass(frozen=True)
class NodeLoad:
    """A force (N) and moment (N·m, anticlockwise positive) at a node, global axes."""

    node: int
    fx_n: float = 0.0
    fy_n: float = 0.0
    mz_nm: float = 0.0


@dataclass(frozen=True)
class PointLoad:
    """A force (N, global axes) on a member, ``position_m`` from its start node."""

    member: int
    position_m: float
    fx_n: float = 0.0
    fy_n: float = 0.0


@dataclass(frozen=True)
class UniformLoad:
    """A force per metre of member length (N/m, global axes) over the whole member."""

    member: int
    wx_n_per_m: float = 0.0
    wy_n_per_m: float = 0.0


@dataclass(frozen=True)
class FrameModel:
    """A plane frame as plain data. ``coords_m`` is one ``(x, y)`` pair per node."""

    node_names: tuple[str, ...]
    coords_m: tuple[tuple[float, float], ...]
    members: tuple[Member, ...]
    supports: tuple[Support, ...]
    node_loads: tuple[NodeLoad, ...] = ()
    point_loads: tuple[PointLoad, ...] = ()
    uniform_loads: tuple[UniformLoad, ...] = ()


@dataclass
class FrameSolution:
    """Results for a batch of ``B`` geometries (``B = 1`` for a single solve).

    :ivar displacements: ``(B, nodes, 3)``: ux, uy (m), rz (rad); rotations of a node
        where every member is pinned are not defined and are left at zero.
    :ivar reactions: ``(B, nodes, 3)``: force of the support on the frame (N, N, N·m),
        zero where a freedom is not held.
    :ivar end_forces: ``(B, members, 6)``: N1, V1, M1, N2, V2, M2 in member axes,
        the forces of the nodes on the member.
    :ivar lengths_m: ``(B, members)``.
    """

    model: FrameModel
    displacements: np.ndarray
    reactions: np.ndarray
    end_forces: np.ndarray
    lengths_m: np.ndarray
    cosines: np.ndarray
    sines: np.ndarray
    _local_loads: dict = field(default_factory=dict, repr=False)

    def member_index(self, name: str) -> int:
        """Return the index of the member called ``name``."""
        for i, member in enumerate(self.model.members):
            if member.name == name:
                return i
        raise KeyError(name)

    def node_index(self, name: str) -> int:
        """Return the index of the node called ``name``."""
        return self.model.node_names.index(name)

    def internal_forces(self, member: int, position_m, batch: int = 0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Return axial force (tension +), shear and bending moment (sagging +) at ``position_m``.

        :param position_m: a distance or array of distances from the member's start node.
        """
        s = np.atleast_1d(np.asarray(position_m, dtype=float))
        n1, v1, m1 = self.end_forces[batch, member, :3]
        axial = np.full_like(s, -n1)
        shear = np.full_like(s, v1)
        moment = -m1 + v1 * s
        for pos, qx, qy in self._local_loads.get(("point", member), ()):
            qx, qy = qx[batch], qy[batch]
            past = s >= pos
            axial = axial - np.where(past, qx, 0.0)
            shear = shear + np.where(past, qy, 0.0)
            moment = moment + np.where(past, qy * (s - pos), 0.0)
        for wx, wy in self._local_loads.get(("uniform", member), ()):
            wx, wy = wx[batch], wy[batch]
            axial = axial - wx * s
            shear = shear + wy * s
            moment = moment + wy * s * s / 2
        return axial, shear, moment

    def member_extremes(self, member: int, batch: int = 0, samples: int = 41) -> dict[str, float]:
        """Return the largest tension, compression, |shear| and |moment| along a member.

        The moment is evaluated at the ends, under every point load and at evenly spaced
        points (between which it is at most quadratic).
        """
        length = self.lengths_m[batch, member]
        points = [np.linspace(0.0, length, samples)]
        for pos, _, _ in self._local_loads.get(("point", member), ()):
            points.append(np.array([pos - 1e-12 * length, pos]))
        s = np.clip(np.concatenate(points), 0.0, length)
        axial, shear, moment = self.internal_forces(member, s, batch)
        return {"tension_n": float(max(0.0, axial.max())),
                "compression_n": float(max(0.0, -axial.min())),
                "shear_n": float(np.abs(shear).max()),
                "moment_nm": float(np.abs(moment).max()),
                "axial_start_n": float(axial[0]), "axial_end_n": float(self.end_forces[batch, member, 3])}


# --------------------------------------------------------------------------- assembly

@dataclass(frozen=True)
class _Plan:
    """What does not change across a batch: indices, free freedoms, load bookkeeping."""

    n_nodes: int
    starts: np.ndarray
    ends: np.ndarray
    e: np.ndarray
    a: np.ndarray
    i: np.ndarray
    rel_start: np.ndarray
    rel_end: np.ndarray
    dof_map: np.ndarray     # (members, 6) global freedom numbers
    free: np.ndarray        # freedoms solved for
    held: np.ndarray        # supported freedoms (reactions)
    scatter: np.ndarray     # (members * 36,) flat index into the (ndof * ndof) matrix


@lru_cache(maxsize=64)
def _plan(model: FrameModel) -> _Plan:
    n = len(model.node_names)
    m = len(model.members)
    if n == 0 or m == 0:
        raise FrameModelError("a frame needs at least two nodes and one member")
    starts = np.array([mb.start for mb in model.members])
    ends = np.array([mb.end for mb in model.members])
    for mb in model.members:
        if mb.start == mb.end:
            raise FrameModelError(f"member {mb.name!r} starts and ends at the same node")
        if not (mb.e_pa > 0 and mb.area_m2 > 0 and mb.inertia_m4 > 0):
            raise FrameModelError(f"member {mb.name!r}: E, A and I must be greater than zero")
    dof_map = np.concatenate([3 * starts[:, None] + np.arange(3), 3 * ends[:, None] + np.arange(3)], axis=1)

    held = np.zeros(3 * n, dtype=bool)
    for sup in model.supports:
        held[3 * sup.node: 3 * sup.node + 3] |= np.array([sup.ux, sup.uy, sup.rz])
    # A freedom no member stiffens: a node with no member, or the rotation of a node
    # where every member is pinned (a hinge). It is left out of the solve.
    stiffened = np.zeros(3 * n, dtype=bool)
    for mb in model.members:
        stiffened[3 * mb.start: 3 * mb.start + 2] = True
        stiffened[3 * mb.end: 3 * mb.end + 2] = True
        if not mb.release_start:
            stiffened[3 * mb.start + 2] = True
        if not mb.release_end:
            stiffened[3 * mb.end + 2] = True
    for node in range(n):
        if not stiffened[3 * node]:
            raise FrameModelError(f"node {model.node_names[node]!r} is not joined to any member")
    for load in model.node_loads:
        if load.mz_nm and not stiffened[3 * load.node + 2]:
            raise FrameModelError(f"a moment is applied at node {model.node_names[load.node]!r}, "
                                  "where every member is pinned: nothing can take it")
    held &= stiffened
    free = np.flatnonzero(stiffened & ~held)
    ndof = 3 * n
    scatter = (dof_map[:, :, None] * ndof + dof_map[:, None, :]).reshape(-1)
    return _Plan(n, starts, ends,
                 np.array([mb.e_pa for mb in model.members]),
                 np.array([mb.area_m2 for mb in model.members]),
                 np.array([mb.inertia_m4 for mb in model.members]),
                 np.array([mb.release_start for mb in model.members]),
                 np.array([mb.release_end for mb in model.members]),
                 dof_map, free, np.flatnonzero(held), scatter)


def _local_stiffness(e, a, i, length):
    """Return member stiffness matrices in member axes, shape ``(B, m, 6, 6)``."""
    ea = e * a / length
    ei = e * i
    k1 = 12 * ei / length ** 3
    k2 = 6 * ei / length ** 2
    k3 = 4 * ei / length
    k4 = 2 * ei / length
    k = np.zeros(length.shape + (6, 6))
    k[..., 0, 0] = k[..., 3, 3] = ea
    k[..., 0, 3] = k[..., 3, 0] = -ea
    k[..., 1, 1] = k[..., 4, 4] = k1
    k[..., 1, 4] = k[..., 4, 1] = -k1
    k[..., 1, 2] = k[..., 2, 1] = k[..., 1, 5] = k[..., 5, 1] = k2
    k[..., 2, 4] = k[..., 4, 2] = k[..., 4, 5] = k[..., 5, 4] = -k2
    k[..., 2, 2] = k[..., 5, 5] = k3
    k[..., 2, 5] = k[..., 5, 2] = k4
    return k


def _condense(k, q, mask, r):
    """Condense freedom ``r`` (a pinned end's rotation) out of ``k`` and ``q`` where ``mask``.

    ``k' = k - k[:, r] k[r, :] / k[r, r]``, ``q' = q - k[:, r] q[r] / k[r, r]``; row and
    column ``r`` become exactly zero, so the end carries no moment.
    """
    if not mask.any():
        return k, q
    col = k[..., :, r] / k[..., r, r][..., None]
    k_new = k - col[..., :, None] * k[..., r, :][..., None, :]
    q_new = q - col * q[..., r][..., None]
    k_new[..., r, :] = 0.0
    k_new[..., :, r] = 0.0
    q_new[..., r] = 0.0
    sel = mask[None, :]
    return np.where(sel[..., None, None], k_new, k), np.where(sel[..., None], q_new, q)


def solve_frame(model: FrameModel) -> FrameSolution:
    """Solve ``model`` once. See :func:`solve_frame_batch`."""
    coords = np.asarray(model.coords_m, dtype=float)[None]
    return solve_frame_batch(model, coords)


def solve_frame_batch(model: FrameModel, coords_m: np.ndarray,
                      load_scale: np.ndarray | None = None) -> FrameSolution:
    """Solve the frame for a batch of node positions (same members, supports and loads).

    :param coords_m: ``(B, nodes, 2)`` node positions, one geometry per batch entry.
    :param load_scale: optional ``(B,)`` factor on every load (all loads scale together).
    :returns: a :class:`FrameSolution` with a leading batch axis.
    :raises FrameModelError: for a mechanism (the frame can move without straining; the
        message names a node and freedom that moves), a loose node, a zero-length
        member, a point load beyond its member's end, or a moment at a hinge.
    """
    with np.errstate(over="raise", invalid="raise", divide="raise"):
        try:
            return _solve_batch(model, coords_m, load_scale)
        except (FloatingPointError, np.linalg.LinAlgError):
            raise FrameModelError("the frame's numbers are out of range (a section, length or load far "
                                  "beyond a stage machine): check the sections and units") from None


def _solve_batch(model: FrameModel, coords_m, load_scale) -> FrameSolution:
    plan = _plan(model)
    coords = np.asarray(coords_m, dtype=float)
    batch = coords.shape[0]
    n_mem = len(model.members)
    ndof = 3 * plan.n_nodes

    d = coords[:, plan.ends] - coords[:, plan.starts]             # (B, m, 2)
    length = np.hypot(d[..., 0], d[..., 1])                         # (B, m)
    if not (length > 1e-9).all():
        bad = int(np.argwhere(~(length > 1e-9))[0, 1])
        raise FrameModelError(f"member {model.members[bad].name!r} has zero length")
    c = d[..., 0] / length
    s = d[..., 1] / length
    scale = np.ones(batch) if load_scale is None else np.asarray(load_scale, dtype=float)
    # Members whose length and direction are the same in every geometry of the batch
    # (a rig's bracket and arms as the beams swing) are assembled once.
    tol = 1e-12
    steady = ((np.ptp(length, axis=0) <= tol * length.max()) & (np.ptp(c, axis=0) <= tol)
              & (np.ptp(s, axis=0) <= tol))

    q, local_loads = _fixed_end_forces(model, batch, length, c, s, scale)

    same_length = bool((np.ptp(length, axis=0) <= tol * length.max()).all())
    k = _local_stiffness(plan.e, plan.a, plan.i, length[:1] if same_length else length)
    k, q = _condense(k, q, plan.rel_start, 2)
    k, q = _condense(k, q, plan.rel_end, 5)

    # Freedoms that only steady members touch are condensed out once (see _solve_free).
    touched = np.zeros(plan.n_nodes, dtype=bool)
    touched[plan.starts[~steady]] = True
    touched[plan.ends[~steady]] = True
    inner = np.flatnonzero(~touched[plan.free // 3])
    outer = np.flatnonzero(touched[plan.free // 3])
    split = batch > 1 and inner.size > 0 and outer.size > 0
    k_const, k_var = _assemble(plan, k, c, s, steady, batch, outer if split else None)
    loads = np.zeros((batch, ndof))
    for load in model.node_loads:
        loads[:, 3 * load.node: 3 * load.node + 3] += np.array([load.fx_n, load.fy_n, load.mz_nm]) * scale[:, None]
    qg = _to_global(q, c, s)                                         # (B, m, 6)
    flat_f = (np.arange(batch)[:, None] * ndof + plan.dof_map.reshape(-1)[None, :]).reshape(-1)
    member_loads = np.bincount(flat_f, weights=qg.reshape(-1), minlength=batch * ndof).reshape(batch, ndof)
    rhs = loads - member_loads

    disp = np.zeros((batch, ndof))
    f = rhs[:, plan.free]
    solved = _solve_condensed(model, plan.free, k_const, k_var, f, inner, outer) if split else None
    if solved is not None:
        disp[:, plan.free[inner]], disp[:, plan.free[outer]] = solved
    else:
        if split:   # the constant part alone is singular: solve whole to name the mechanism
            k_const, k_var = _assemble(plan, k, c, s, steady, batch)
        k_ff = k_const[None] if k_var is None else k_var + k_const
        disp[:, plan.free] = _cholesky_solve(model, plan.free, np.broadcast_to(k_ff, (batch,) + k_ff.shape[1:]), f)

    d_local = _to_local(disp[:, plan.dof_map], c, s)                 # (B, m, 6)
    if k.shape[0] == 1:
        end_forces = np.einsum("mij,bmj->bmi", k[0], d_local) + q
    else:
        end_forces = np.einsum("bmij,bmj->bmi", k, d_local) + q
    # Node equilibrium: support reaction = Σ forces of the node on its members - applied load.
    on_members = np.bincount(flat_f, weights=_to_global(end_forces, c, s).reshape(-1),
                             minlength=batch * ndof).reshape(batch, ndof)
    reactions = np.zeros((batch, ndof))
    if plan.held.size:
        reactions[:, plan.held] = on_members[:, plan.held] - loads[:, plan.held]
    return FrameSolution(model, disp.reshape(batch, -1, 3), reactions.reshape(batch, -1, 3),
                         end_forces, length, c, s, local_loads)


def _fixed_end_forces(model: FrameModel, batch: int, length, c, s, scale):
    """Return fixed-end forces ``(B, m, 6)`` in member axes and the loads for internal forces."""
    q = np.zeros((batch, len(model.members), 6))
    local_loads: dict = {}
    for load in model.point_loads:
        mi = load.member
        length_i = length[:, mi]
        if not (-1e-9 <= load.position_m <= length_i.min() + 1e-9):
            raise FrameModelError(f"a load on member {model.members[mi].name!r} is {load.position_m:g} m "
                                  f"from its start, beyond its length {length_i.min():g} m")
        qx = (c[:, mi] * load.fx_n + s[:, mi] * load.fy_n) * scale
        qy = (-s[:, mi] * load.fx_n + c[:, mi] * load.fy_n) * scale
        pa = min(max(load.position_m, 0.0), float(length_i.min()))
        pb = length_i - pa
        q[:, mi, 0] -= qx * pb / length_i
        q[:, mi, 3] -= qx * pa / length_i
        q[:, mi, 1] -= qy * pb ** 2 * (3 * pa + pb) / length_i ** 3
        q[:, mi, 2] -= qy * pa * pb ** 2 / length_i ** 2
        q[:, mi, 4] -= qy * pa ** 2 * (pa + 3 * pb) / length_i ** 3
        q[:, mi, 5] += qy * pa ** 2 * pb / length_i ** 2
        local_loads.setdefault(("point", mi), []).append((pa, qx, qy))
    for load in model.uniform_loads:
        mi = load.member
        length_i = length[:, mi]
        wx = (c[:, mi] * load.wx_n_per_m + s[:, mi] * load.wy_n_per_m) * scale
        wy = (-s[:, mi] * load.wx_n_per_m + c[:, mi] * load.wy_n_per_m) * scale
        q[:, mi, 0] -= wx * length_i / 2
        q[:, mi, 3] -= wx * length_i / 2
        q[:, mi, 1] -= wy * length_i / 2
        q[:, mi, 4] -= wy * length_i / 2
        q[:, mi, 2] -= wy * length_i ** 2 / 12
        q[:, mi, 5] += wy * length_i ** 2 / 12
        local_loads.setdefault(("uniform", mi), []).append((wx, wy))
    return q, local_loads


def _rotation(c, s):
    """Return the member rotation matrices ``t`` (local = t @ global), shape ``c.shape + (6, 6)``."""
    t = np.zeros(c.shape + (6, 6))
    for o in (0, 3):
        t[..., o, o] = t[..., o + 1, o + 1] = c
        t[..., o, o + 1] = s
        t[..., o + 1, o] = -s
        t[..., o + 2, o + 2] = 1.0
    return t


def _to_global(v, c, s):
    """Rotate member-axis vectors ``(B, m, 6)`` to global axes."""
    out = np.empty_like(v)
    for o in (0, 3):
        out[..., o] = c * v[..., o] - s * v[..., o + 1]
        out[..., o + 1] = s * v[..., o] + c * v[..., o + 1]
        out[..., o + 2] = v[..., o + 2]
    return out


def _to_local(v, c, s):
    """Rotate global vectors ``(B, m, 6)`` to member axes."""
    out = np.empty_like(v)
    for o in (0, 3):
        out[..., o] = c * v[..., o] + s * v[..., o + 1]
        out[..., o + 1] = -s * v[..., o] + c * v[..., o + 1]
        out[..., o + 2] = v[..., o + 2]
    return out


def _assemble(plan: _Plan, k, c, s, steady, batch: int, outer: np.ndarray | None = None):
    """Return the stiffness of the free freedoms as (constant part, varying part).

    The constant part ``(nf, nf)`` holds the steady members (transformed and scattered
    once); the varying part ``(B, n, n)`` the others, per geometry, over the freedoms
    ``outer`` (indices into the free ones; all of them when ``None``), or ``None`` when
    every member is steady. Only the free block is ever needed: reactions come from
    the member end forces.
    """
    nf = plan.free.size
    pos = np.full(3 * plan.n_nodes, -1)
    pos[plan.free] = np.arange(nf)
    idx_s = np.flatnonzero(steady)
    idx_v = np.flatnonzero(~steady)
    kb0 = k[0]
    rows = pos[plan.dof_map][:, :, None]
    cols = pos[plan.dof_map][:, None, :]
    keep = ((rows >= 0) & (cols >= 0)).reshape(len(steady), 36)
    target = (rows * nf + cols).reshape(len(steady), 36)
    t_s = _rotation(c[0, idx_s], s[0, idx_s])
    kg_s = (np.swapaxes(t_s, -1, -2) @ kb0[idx_s] @ t_s).reshape(-1, 36)
    k_const = np.bincount(target[idx_s][keep[idx_s]], weights=kg_s[keep[idx_s]],
                          minlength=nf * nf).reshape(nf, nf)
    if idx_v.size == 0:
        return k_const, None
    if outer is not None:
        opos = np.full(nf + 1, -1)
        opos[outer] = np.arange(outer.size)
        sub = opos[np.where(pos[plan.dof_map] >= 0, pos[plan.dof_map], nf)]
        n = outer.size
        rows, cols = sub[:, :, None], sub[:, None, :]
        keep = ((rows >= 0) & (cols >= 0)).reshape(len(steady), 36)
        target = (rows * n + cols).reshape(len(steady), 36)
    else:
        n = nf
    if k.shape[0] == 1:
        kg_v = _rotate_fixed(kb0[idx_v], c[:, idx_v], s[:, idx_v])
    else:
        t_v = _rotation(c[:, idx_v], s[:, idx_v])
        kg_v = np.swapaxes(t_v, -1, -2) @ k[:, idx_v] @ t_v
    kv = keep[idx_v].reshape(-1)
    weights = kg_v.reshape(batch, -1)[:, kv]
    flat = (np.arange(batch)[:, None] * n * n + target[idx_v].reshape(-1)[kv][None, :]).reshape(-1)
    k_var = np.bincount(flat, weights=weights.reshape(-1), minlength=batch * n * n).reshape(batch, n, n)
    return k_const, k_var


#: t = c·_TC + s·_TS + _T1 (the rotation matrix's three constant parts)
_TC = _rotation(np.ones(()), np.zeros(()))
_TC[2, 2] = _TC[5, 5] = 0.0
_TS = _rotation(np.zeros(()), np.ones(()))
_TS[2, 2] = _TS[5, 5] = 0.0
_T1 = np.zeros((6, 6))
_T1[2, 2] = _T1[5, 5] = 1.0


def _rotate_fixed(k, c, s):
    """Return ``tᵀ k t`` for members of fixed local stiffness ``k`` (m, 6, 6) over a batch of (c, s).

    With ``t = c·Tc + s·Ts + T1``, ``tᵀ k t`` is a fixed combination of six matrices
    weighted by c², s², c·s, c, s and 1: one small matrix product per member instead
    of two 6 x 6 products per member and geometry.
    """
    parts = []
    for a_, b_ in ((_TC, _TC), (_TS, _TS), (_T1, _T1)):
        parts.append(a_.T @ k @ b_)
    cross = [(_TC, _TS), (_TC, _T1), (_TS, _T1)]
    for a_, b_ in cross:
        parts.append(a_.T @ k @ b_ + b_.T @ k @ a_)
    basis = np.stack(parts, axis=1).reshape(k.shape[0], 6, 36)        # (m, 6, 36)
    coef = np.stack([c * c, s * s, np.ones_like(c), c * s, c, s], axis=-1)   # (B, m, 6)
    out = np.matmul(np.swapaxes(coef, 0, 1), basis)                   # (m, B, 36)
    return np.swapaxes(out, 0, 1).reshape(c.shape + (6, 6))


def _solve_condensed(model, free, k_const, k_var, f, inner, outer):
    """Condense the ``inner`` freedoms (the same stiffness in every geometry) out once,
    then solve the ``outer`` ones for the whole batch by Cholesky.

    :returns: (inner displacements, outer displacements), or ``None`` when the inner
        block alone is singular (the full solve then names the mechanism).
    """
    k_ii = k_const[inner[:, None], inner[None, :]]
    k_io = k_const[inner[:, None], outer[None, :]]
    diag = np.diag(k_ii)
    if not (diag > 0).all():
        return None
    sc = 1.0 / np.sqrt(diag)
    try:
        chol = np.linalg.cholesky(k_ii * sc[:, None] * sc[None, :])
    except np.linalg.LinAlgError:
        return None
    if not (np.diag(chol) ** 2 > MECHANISM_PIVOT).all():
        return None
    chol_inv = np.linalg.inv(chol)
    k_ii_inv = (sc[:, None] * chol_inv.T) @ (chol_inv * sc[None, :])
    x_io = k_ii_inv @ k_io                                          # (ni, no)
    x_f = f[:, inner] @ k_ii_inv.T                                  # (B, ni)
    k_star = k_var + (k_const[outer[:, None], outer[None, :]] - k_io.T @ x_io)
    f_star = f[:, outer] - x_f @ k_io
    d_out = _cholesky_solve(model, free[outer], k_star, f_star)
    d_in = x_f - d_out @ x_io.T
    return d_in, d_out


def _cholesky_solve(model: FrameModel, dofs: np.ndarray, kff: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Solve ``kff @ x = f`` for a batch by Cholesky, raising :class:`FrameModelError` for a mechanism.

    The matrix is scaled to a unit diagonal first; a pivot below
    :data:`MECHANISM_PIVOT` means the frame can move without straining.
    """
    batch, n = f.shape
    if n == 0:
        return f.copy()
    diag = np.einsum("bii->bi", kff)
    if not (diag > 0).all():
        raise _mechanism(model, int(dofs[np.argwhere(~(diag > 0))[0, 1]]))
    sc = 1.0 / np.sqrt(diag)
    scaled = kff * sc[:, :, None] * sc[:, None, :]
    try:
        chol = np.linalg.cholesky(scaled)
    except np.linalg.LinAlgError:
        chol = None
    if chol is None or not (np.einsum("bii->bi", chol) ** 2 > MECHANISM_PIVOT).all():
        bad = 0 if chol is None else int(np.argwhere(~(np.einsum("bii->bi", chol) ** 2 > MECHANISM_PIVOT))[0, 0])
        _, vec = np.linalg.eigh(scaled[bad])
        raise _mechanism(model, int(dofs[np.argmax(np.abs(vec[:, 0]))]))
    b = f * sc
    if batch == 1:
        y = np.linalg.solve(chol[0], b[0])
        return (np.linalg.solve(chol[0].T, y) * sc[0])[None]
    # batched forward and back substitution, one freedom at a time across the batch
    y = np.empty_like(b)
    for i in range(n):
        y[:, i] = (b[:, i] - np.einsum("bj,bj->b", chol[:, i, :i], y[:, :i])) / chol[:, i, i]
    x = np.empty_like(b)
    for i in range(n - 1, -1, -1):
        x[:, i] = (y[:, i] - np.einsum("bj,bj->b", chol[:, i + 1:, i], x[:, i + 1:])) / chol[:, i, i]
    return x * sc


def _mechanism(model: FrameModel, dof: int) -> FrameModelError:
    node, kind = divmod(dof, 3)
    return FrameModelError(
        f"the frame is a mechanism: node {model.node_names[node]!r} can move ({DOF_NAMES[kind]}) "
        "without straining any member; add a support (the lifters are a vertical support at the "
        "handle) or remove a pin")

