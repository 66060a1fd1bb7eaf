"""An independent 2-D steady heat-conduction solver for the tests (finite volumes, scipy).

Not part of the tool: it produces the surface temperatures and heat flows of ISO 10211-style
cross-sections (adiabatic cut-off planes at least 1 m from the junction, surface resistances
at the faces in contact with air) against which `envelope.bridges` is checked.

The section is a grid of square cells of side ``h`` [m]. Each cell is solid (conductivity
``lam > 0`` [W/(m K)]), or air of an environment (``env > 0``: index into a list of
`Environment`), or void (neither: adiabatic). Heat flows per metre of depth. Between two
solid cells the conductance is ``2 / (1/lam1 + 1/lam2)`` [W/(m K)] (half a cell of each,
face length h over distance h); between a solid cell and air it is
``h / (h / (2 lam) + R_s)`` with the environment's surface resistance for the face's
direction (horizontal heat flow across a vertical face, vertical flow across a horizontal
one), as in ISO 10211:2017 §6 and ISO 6946:2017 Table 7. The surface temperature of a face
is ``T_air - q R_s`` with q the face's heat flux density [W/m²].

References
----------
[1] ISO 10211:2017, Thermal bridges in building construction -- Heat flows and surface
    temperatures -- Detailed calculations (cut-off planes, boundary conditions, psi).
[2] S. V. Patankar, Numerical Heat Transfer and Fluid Flow, Hemisphere (1980), ch. 4
    (finite-volume discretisation, harmonic-mean interface conductivity).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.sparse.linalg import spsolve

__all__ = ["Environment", "Face", "Solution", "solve", "rectangle_dirichlet_series",
           "wall_floor_section", "corner_section"]


@dataclass(frozen=True)
class Environment:
    """Air on one side: temperature [°C], surface resistance for a vertical face (horizontal
    heat flow) and for a horizontal face (vertical heat flow) [m² K/W]."""

    t_c: float
    r_horizontal_flow: float
    r_vertical_flow: float


@dataclass(frozen=True)
class Face:
    """Faces between solid cells and air of one environment (arrays, one entry per face).

    ``x``, ``y``: face centre [m]; ``normal``: "x" for a vertical face, "y" for a horizontal
    one; ``side``: +1 when the air lies on the + side of the cell; ``t_s_c``: surface
    temperature [°C]; ``q_w_m2``: heat flux density from the air into the solid [W/m²].
    """

    x: np.ndarray
    y: np.ndarray
    normal: np.ndarray
    side: np.ndarray
    t_s_c: np.ndarray
    q_w_m2: np.ndarray


@dataclass
class Solution:
    t_c: np.ndarray
    """Cell temperatures [°C] (NaN outside the solid)."""
    faces: dict
    """Environment index -> `Face`."""
    h: float

    def heat_flow_w_m(self, env: int) -> float:
        """Heat flow from environment `env` into the solid per metre of depth [W/m]."""
        f = self.faces[env]
        return float(np.sum(f.q_w_m2) * self.h)


def solve(lam, env, environments: dict, h: float, x0: float = 0.0, y0: float = 0.0) -> Solution:
    """Steady temperatures of a 2-D section.

    Parameters
    ----------
    lam : ndarray (ny, nx)
        Conductivity of solid cells [W/(m K)], 0 elsewhere. Row 0 is the lowest row (y up).
    env : ndarray of int (ny, nx)
        Environment index of air cells (> 0), 0 for solid or void cells.
    environments : dict int -> Environment
    h : float
        Cell size [m].
    x0, y0 : float
        Coordinates of the lower-left corner of cell (0, 0) [m].
    """
    lam = np.asarray(lam, float)
    env = np.asarray(env, int)
    ny, nx = lam.shape
    solid = lam > 0
    idx = -np.ones(lam.shape, int)
    idx[solid] = np.arange(int(solid.sum()))
    n = int(solid.sum())
    rows, cols, vals = [], [], []
    b = np.zeros(n)
    diag = np.zeros(n)
    face_parts = {k: [] for k in environments}
    # solid-solid links, both directions of each axis
    for axis in (0, 1):
        a = solid[:-1, :] & solid[1:, :] if axis == 0 else solid[:, :-1] & solid[:, 1:]
        if axis == 0:
            i1, i2 = idx[:-1, :][a], idx[1:, :][a]
            l1, l2 = lam[:-1, :][a], lam[1:, :][a]
        else:
            i1, i2 = idx[:, :-1][a], idx[:, 1:][a]
            l1, l2 = lam[:, :-1][a], lam[:, 1:][a]
        g = 2.0 / (1.0 / l1 + 1.0 / l2)
        rows += [i1, i2]
        cols += [i2, i1]
        vals += [-g, -g]
        np.add.at(diag, i1, g)
        np.add.at(diag, i2, g)
    # solid-air links
    jj, ii = np.meshgrid(np.arange(nx), np.arange(ny))
    for axis, shift in ((0, 1), (0, -1), (1, 1), (1, -1)):
        other = np.roll(env, -shift, axis=axis)
        valid = np.ones_like(solid)
        if axis == 0:
            valid[-1 if shift == 1 else 0, :] = False
        else:
            valid[:, -1 if shift == 1 else 0] = False
        link = solid & valid & (other > 0)
        for k, e in environments.items():
            m = link & (other == k)
            if not m.any():
                continue
            r_s = e.r_vertical_flow if axis == 0 else e.r_horizontal_flow
            lm = lam[m]
            g = h / (h / (2.0 * lm) + r_s)
            i = idx[m]
            np.add.at(diag, i, g)
            np.add.at(b, i, g * e.t_c)
            xc = x0 + (jj[m] + 0.5) * h
            yc = y0 + (ii[m] + 0.5) * h
            if axis == 0:
                yc = yc + shift * 0.5 * h
            else:
                xc = xc + shift * 0.5 * h
            face_parts[k].append((i, g, xc, yc, "y" if axis == 0 else "x", shift, r_s))
    rows.append(np.arange(n))
    cols.append(np.arange(n))
    vals.append(diag)
    a_mat = sparse.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                              shape=(n, n))
    t = spsolve(a_mat.tocsc(), b)
    field = np.full(lam.shape, np.nan)
    field[solid] = t
    faces = {}
    for k, parts in face_parts.items():
        if not parts:
            continue
        e = environments[k]
        xs, ys, normals, sides, ts, qs = [], [], [], [], [], []
        for i, g, xc, yc, normal, shift, r_s in parts:
            q = g * (e.t_c - t[i]) / h  # W/m² of face
            xs.append(xc)
            ys.append(yc)
            normals.append(np.full(i.size, normal))
            sides.append(np.full(i.size, shift))
            ts.append(e.t_c - q * r_s)
            qs.append(q)
        faces[k] = Face(np.concatenate(xs), np.concatenate(ys), np.concatenate(normals),
                        np.concatenate(sides), np.concatenate(ts), np.concatenate(qs))
    return Solution(field, faces, h)


def rectangle_dirichlet_series(x, y, a: float, b: float, t_top: float, n_terms: int = 401):
    """Analytic steady field of a rectangle [0, a] x [0, b] with T = t_top on y = b and 0 on
    the other three sides (separation of variables, Carslaw & Jaeger, Conduction of Heat in
    Solids, 2nd ed. 1959, §5.4): T = t_top Σ_{n odd} 4/(nπ) sin(nπx/a) sinh(nπy/a)/sinh(nπb/a).
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    out = np.zeros(np.broadcast(x, y).shape)
    for n in range(1, n_terms + 1, 2):
        k = n * np.pi / a
        # sinh(k y)/sinh(k b) written to stay finite for large k
        ratio = np.exp(k * (y - b)) * (1 - np.exp(-2 * k * y)) / (1 - np.exp(-2 * k * b))
        out = out + 4.0 / (n * np.pi) * np.sin(k * x) * ratio
    return t_top * out


# ----------------------------------------------------------------------- test geometries
MASONRY = 0.9  # brick masonry [W/(m K)], handbook order of magnitude (from memory)
INSULATION = 0.04  # mineral wool [W/(m K)] (from memory)
CONCRETE = 2.0  # reinforced concrete [W/(m K)], ISO 10456 table value 2.3/2.5 (from memory)


def wall_floor_section(h: float = 0.01, length_m: float = 1.5, t_i: float = 20.0,
                       t_e: float = 0.0, r_si: float | None = None):
    """Externally insulated masonry wall on a concrete floor slab exposed to outdoor air below.

    Geometry (metres; interior in x > 0, y > 0): wall masonry 0.20 m (x in [-0.2, 0]) with
    0.10 m of insulation outside (x in [-0.3, -0.2]) from y = -0.25 up to the cut-off plane
    at y = `length_m`; floor slab 0.15 m of concrete (y in [-0.15, 0]) on 0.10 m of
    insulation (y in [-0.25, -0.15]) from the wall to the cut-off plane at x = `length_m`.
    The masonry runs down past the floor insulation to the outdoor air: the bridge.
    Surface resistances: ISO 6946:2017 Table 7, inside 0.13 (wall) and 0.17 (floor,
    downward flow), outside 0.04; or `r_si` on every interior face (the fRsi convention).

    Returns
    -------
    solution, info
        ``info`` holds U of the undisturbed wall and floor [W/(m² K)], the internal lengths
        [m], the external lengths [m] and the interior environment index (1).
    """
    x0, y0 = -0.30 - 2 * h, -0.25 - 2 * h
    nx = int(round((length_m - x0) / h))
    ny = int(round((length_m - y0) / h))
    xc = x0 + (np.arange(nx) + 0.5) * h
    yc = y0 + (np.arange(ny) + 0.5) * h
    xx, yy = np.meshgrid(xc, yc)
    lam = np.zeros((ny, nx))
    wall = (xx > -0.3) & (xx < 0) & (yy > -0.25)
    lam[wall & (xx < -0.2)] = INSULATION
    lam[wall & (xx > -0.2)] = MASONRY
    floor = (xx > 0) & (yy > -0.25) & (yy < 0)
    lam[floor & (yy > -0.15)] = CONCRETE
    lam[floor & (yy < -0.15)] = INSULATION
    env = np.zeros((ny, nx), int)
    env[(xx > 0) & (yy > 0)] = 1
    env[(lam == 0) & (env == 0)] = 2
    # the cut-off planes are adiabatic: no air beyond the solid at x = length or y = length
    r_w = 0.13 if r_si is None else r_si
    r_f = 0.17 if r_si is None else r_si
    envs = {1: Environment(t_i, r_w, r_f), 2: Environment(t_e, 0.04, 0.04)}
    sol = solve(lam, env, envs, h, x0, y0)
    u_w = 1.0 / (r_w + 0.20 / MASONRY + 0.10 / INSULATION + 0.04)
    u_f = 1.0 / (r_f + 0.15 / CONCRETE + 0.10 / INSULATION + 0.04)
    info = {"u_wall": u_w, "u_floor": u_f, "l_wall_int": length_m, "l_floor_int": length_m,
            "l_wall_ext": length_m + 0.25, "l_floor_ext": length_m + 0.30, "interior": 1}
    return sol, info


def corner_section(h: float = 0.01, length_m: float = 1.5, t_i: float = 20.0,
                   t_e: float = 0.0, r_si: float = 0.13, insulation_m: float = 0.10):
    """Plan section of an external corner of two externally insulated masonry walls.

    Wall A: masonry y in [-0.2, 0], insulation y in [-0.2 - d, -0.2] (d = `insulation_m`),
    from the corner to the cut-off plane at x = `length_m`; wall B the same turned by 90°.
    Interior in x > 0, y > 0. Surface resistances 0.13 inside, 0.04 outside (ISO 6946:2017
    Table 7), or `r_si` inside.
    """
    d = 0.2 + insulation_m
    x0 = y0 = -d - 2 * h
    n = int(round((length_m - x0) / h))
    c = x0 + (np.arange(n) + 0.5) * h
    xx, yy = np.meshgrid(c, c)
    lam = np.zeros((n, n))
    solid = (xx > -d) & (yy > -d) & ((xx < 0) | (yy < 0))
    lam[solid] = INSULATION
    lam[solid & (xx > -0.2) & (yy > -0.2)] = MASONRY
    env = np.zeros((n, n), int)
    env[(xx > 0) & (yy > 0)] = 1
    env[(lam == 0) & (env == 0)] = 2
    envs = {1: Environment(t_i, r_si, r_si), 2: Environment(t_e, 0.04, 0.04)}
    sol = solve(lam, env, envs, h, x0, y0)
    u = 1.0 / (r_si + 0.20 / MASONRY + insulation_m / INSULATION + 0.04)
    info = {"u_wall": u, "l_int": length_m, "l_ext": length_m + d, "interior": 1}
    return sol, info
