"""Sensitivity of a prism system to fabrication and mount errors, by exact re-trace.

Error parameters per prism (all in radians or index units inside):

* ``angle``: a functional angle between two toleranced faces (see ``angle_chain``). The part is
  registered on its datum face B; an angle error turns every toleranced face beyond that angle
  (walking away from datum B) about the part height axis, each about its own chief-ray point.
* ``pyramidal``: one optical face tilted out of the principal section (its normal gains a
  component along the part height), about its chief-ray point.
* ``nd``: melt index offset, the same at every wavelength; ``vd``: relative change g of the
  dispersion, ``n(λ) -> n(λ) + g (n(λ) - nd)`` (g = -Δvd/vd).
* ``mount_rot``: rotation of the whole prism about the system y axis; ``mount_tilt``: about the
  system x axis; both about the middle of the chief-ray path inside the prism.

``Model.evaluate`` applies any batch of parameter vectors exactly (planes rotated, indices
changed) and re-traces; ``Model.jacobian`` gives central differences of the outputs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from prismfab.design.perturb import Nominal, find_path, observe, prism_planes, rotate_planes, trace_path
from prismfab.model import Prism, System

__all__ = ["ChainAngle", "Model", "Param", "angle_chain", "build_model"]

SIDE_STEP_MM = 1.0
STEPS = {"angle": 1e-5, "pyramidal": 1e-5, "nd": 1e-5, "vd": 1e-4, "mount_rot": 1e-5,
         "mount_tilt": 1e-5}


@dataclass(frozen=True, slots=True)
class ChainAngle:
    """A functional angle: between toleranced faces ``face_a`` and ``face_b`` of one prism.

    Args:
        face_a, face_b: face indices, ``face_a`` nearer datum B along the chain.
        vertex: the vertex between them when adjacent, else None (the angle spans ground faces).
        moved: faces turned when this angle changes (those beyond it, away from datum B).
        sign: rotation about part +Z per unit increase of the interior angle.
        value_rad: nominal interior angle (pi minus the turn between the faces).
    """

    face_a: int
    face_b: int
    vertex: int | None
    moved: tuple[int, ...]
    sign: float
    value_rad: float


@dataclass(frozen=True, slots=True)
class Param:
    """One error parameter: prism index, kind, and the chain angle or face it acts on."""

    prism: int
    kind: str
    index: int = -1  # chain-angle index (angle) or face index (pyramidal)
    label: str = ""


def _edge_dir(prism: Prism, i: int) -> np.ndarray:
    (x0, y0), (x1, y1) = prism.vertices_mm[i], prism.vertices_mm[(i + 1) % len(prism.vertices_mm)]
    e = np.array([x1 - x0, y1 - y0])
    return e / np.linalg.norm(e)


def _turn(prism: Prism, a: int, b: int) -> float:
    """CCW turning angle from face a's edge direction to face b's, walking forward a -> b."""
    n = len(prism.vertices_mm)
    total, i = 0.0, a
    while i != b:
        e0, e1 = _edge_dir(prism, i), _edge_dir(prism, (i + 1) % n)
        total += math.atan2(e0[0] * e1[1] - e0[1] * e1[0], float(e0 @ e1))
        i = (i + 1) % n
    return total


def angle_chain(prism: Prism, datum_face: int) -> tuple[ChainAngle, ...]:
    """The functional angles of a prism, as a chain from its datum face B.

    Toleranced faces are the optical faces plus datum B; other ground faces (apex flats, spare
    sides) do not matter optically and are skipped. Of the two angles at datum B, the one farther
    from 90 degrees closes the chain (auxiliary, in parentheses on the drawing); every other angle
    between neighbouring toleranced faces is functional.
    """
    n = len(prism.faces)
    sig = [i for i in range(n) if prism.faces[i].role.is_optical or i == datum_face]
    if len(sig) < 2:
        return ()
    pos = sig.index(datum_face)
    prev_f, next_f = sig[pos - 1], sig[(pos + 1) % len(sig)]
    before = abs(math.pi - _turn(prism, prev_f, datum_face) - math.pi / 2)
    after = abs(math.pi - _turn(prism, datum_face, next_f) - math.pi / 2)
    forward = before >= after  # the angle before datum B closes the chain: walk forward
    order = [sig[(pos + k) % len(sig)] for k in range(len(sig))] if forward else \
        [sig[(pos - k) % len(sig)] for k in range(len(sig))]
    out = []
    for j in range(len(order) - 1):
        a, b = order[j], order[j + 1]
        lo, hi = (a, b) if forward else (b, a)
        adjacent = (lo + 1) % n == hi
        out.append(ChainAngle(
            face_a=a, face_b=b, vertex=hi if adjacent else None, moved=tuple(order[j + 1:]),
            sign=-1.0 if forward else 1.0, value_rad=math.pi - _turn(prism, lo, hi)))
    return tuple(out)


@dataclass(frozen=True, slots=True)
class Model:
    """A system ready for batched exact re-trace (build with ``build_model``)."""

    system: System
    wavelengths_nm: tuple[float, ...]
    n_glass: np.ndarray  # (W, K) index per wavelength and prism
    nd: np.ndarray  # (K,)
    nominals: tuple[Nominal, ...]  # per wavelength
    points: np.ndarray  # (K, F, 3) face planes, padded
    normals: np.ndarray
    pivots: np.ndarray  # (K, F, 3) chief-ray point per face (face middle when not hit)
    centres: np.ndarray  # (K, 3) mount pivot per prism
    heights: np.ndarray  # (K, 3) part +Z in the system frame
    chains: tuple[tuple[ChainAngle, ...], ...]
    params: tuple[Param, ...]

    def evaluate(self, errors: np.ndarray) -> dict[str, np.ndarray]:
        """Exact outputs for a batch of parameter vectors.

        Args:
            errors: (B, P) parameter values in the order of ``params`` (rad, index, fraction).

        Returns:
            arrays of shape (B, W): "pointing_in", "pointing_out" (rad), "offset" (mm),
            "magnification" (ratio), each as built (not minus nominal).
        """
        errors = np.atleast_2d(errors)
        pts, nrm = self._perturbed_planes(errors)
        beam = self.system.beam
        d_in = np.array(beam.direction, float) / np.linalg.norm(beam.direction)
        side = np.cross([0.0, 1.0, 0.0], d_in)
        side /= np.linalg.norm(side)
        p0 = np.broadcast_to(np.array(beam.origin_mm, float), (len(errors), 3))
        d0 = np.broadcast_to(d_in, (len(errors), 3))
        cols: dict[str, list[np.ndarray]] = {k: [] for k in
                                             ("pointing_in", "pointing_out", "offset", "magnification")}
        for w, nominal in enumerate(self.nominals):
            n = self._indices(errors, w)
            pc, dc = trace_path(nominal.events, pts, nrm, n, p0, d0)
            ps, ds = trace_path(nominal.events, pts, nrm, n, p0 + SIDE_STEP_MM * side, d0)
            ref_p = np.array(nominal.hits_mm[-1])
            ref_d = np.array(nominal.points_mm[-1]) - ref_p
            obs = observe(pc, dc, ps, ds, ref_point=ref_p, ref_direction=ref_d / np.linalg.norm(ref_d),
                          input_direction=d_in, side_step_mm=SIDE_STEP_MM)
            cols["pointing_in"].append(obs.pointing_in_rad)
            cols["pointing_out"].append(obs.pointing_out_rad)
            cols["offset"].append(obs.offset_mm)
            cols["magnification"].append(obs.magnification)
        return {k: np.column_stack(v) for k, v in cols.items()}

    def jacobian(self, params: tuple[int, ...] | None = None) -> dict[str, np.ndarray]:
        """Central-difference derivatives, per output: (W, P) per unit of each parameter.

        Magnification is returned as a relative change (d(M)/M per unit).
        """
        idx = range(len(self.params)) if params is None else params
        idx = list(idx)
        h = np.array([STEPS[self.params[i].kind] for i in idx])
        e = np.zeros((2 * len(idx), len(self.params)))
        for j, i in enumerate(idx):
            e[2 * j, i], e[2 * j + 1, i] = h[j], -h[j]
        out = self.evaluate(e)
        nominal = self.evaluate(np.zeros((1, len(self.params))))["magnification"][0]
        jac = {}
        for key, val in out.items():
            delta = val[0::2] - val[1::2]
            if key == "pointing_in":  # a deviation near 180 degrees must not wrap
                delta = np.angle(np.exp(1j * delta))
            diff = delta / (2.0 * h[:, None])
            jac[key] = (diff / nominal[None, :] if key == "magnification" else diff).T
        return jac

    def _indices(self, errors: np.ndarray, w: int) -> np.ndarray:
        n = np.broadcast_to(self.n_glass[w], (len(errors), self.n_glass.shape[1])).copy()
        for j, p in enumerate(self.params):
            if p.kind == "nd":
                n[:, p.prism] += errors[:, j]
            elif p.kind == "vd":
                n[:, p.prism] += errors[:, j] * (self.n_glass[w, p.prism] - self.nd[p.prism])
        return n

    def _perturbed_planes(self, errors: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        b = len(errors)
        k_n, f_n = self.points.shape[:2]
        inplane = np.zeros((b, k_n, f_n))
        tilt = np.zeros((b, k_n, f_n))
        rot_y = np.zeros((b, k_n))
        rot_x = np.zeros((b, k_n))
        for j, p in enumerate(self.params):
            if p.kind == "angle":
                ca = self.chains[p.prism][p.index]
                for f in ca.moved:
                    inplane[:, p.prism, f] += ca.sign * errors[:, j]
            elif p.kind == "pyramidal":
                tilt[:, p.prism, p.index] += errors[:, j]
            elif p.kind == "mount_rot":
                rot_y[:, p.prism] += errors[:, j]
            elif p.kind == "mount_tilt":
                rot_x[:, p.prism] += errors[:, j]
        pts = np.broadcast_to(self.points, (b, k_n, f_n, 3))
        nrm = np.broadcast_to(self.normals, (b, k_n, f_n, 3))
        piv = self.pivots[None]
        pts, nrm = rotate_planes(pts, nrm, self.heights[None, :, None, :], piv, inplane)
        tilt_axis = np.cross(self.normals, self.heights[:, None, :])
        tilt_axis /= np.maximum(np.linalg.norm(tilt_axis, axis=-1, keepdims=True), 1e-300)
        # the axis is taken from the nominal face: second-order differences are ignored here
        pts, nrm = rotate_planes(pts, nrm, tilt_axis[None], piv, tilt)
        cen = self.centres[None, :, None, :]
        pts, nrm = rotate_planes(pts, nrm, np.array([0.0, 1.0, 0.0]), cen, rot_y[..., None])
        pts, nrm = rotate_planes(pts, nrm, np.array([1.0, 0.0, 0.0]), cen, rot_x[..., None])
        return pts, nrm


def build_model(system: System, n_glass: np.ndarray, nd: np.ndarray, *,
                datum_faces: tuple[int, ...], wavelengths_nm: tuple[float, ...]) -> Model:
    """Prepare a system for sensitivity analysis.

    Args:
        system: the solved system.
        n_glass: (W, K) index of each prism at each wavelength (design wavelength first).
        nd: (K,) catalogue index at the d line (reference of the dispersion change).
        datum_faces: per prism, the face index of datum B.
        wavelengths_nm: the W wavelengths.
    """
    nominals = tuple(find_path(system, n_glass[w]) for w in range(len(wavelengths_nm)))
    k_n = len(system.prisms)
    f_n = max(len(p.faces) for p in system.prisms)
    pts = np.zeros((k_n, f_n, 3))
    nrm = np.zeros((k_n, f_n, 3))
    nrm[..., 0] = 1.0
    piv = np.zeros((k_n, f_n, 3))
    heights = np.zeros((k_n, 3))
    for k, prism in enumerate(system.prisms):
        q, n = prism_planes(prism)
        m = len(prism.faces)
        pts[k, :m], nrm[k, :m] = q, n
        nxt = np.roll(q, -1, axis=0)
        piv[k, :m] = (q + nxt) / 2.0
        heights[k] = prism.pose.apply_vector((0.0, 0.0, 1.0))
    hits_by_prism: dict[int, list[np.ndarray]] = {}
    for ev, hit in zip(nominals[0].events, nominals[0].hits_mm, strict=True):
        piv[ev.prism, ev.face] = hit
        hits_by_prism.setdefault(ev.prism, []).append(np.array(hit))
    centres = np.array([np.mean(hits_by_prism.get(k, [piv[k, 0]]), axis=0) for k in range(k_n)])
    chains = tuple(angle_chain(p, datum_faces[k]) for k, p in enumerate(system.prisms))
    params: list[Param] = []
    for k, prism in enumerate(system.prisms):
        for j, ca in enumerate(chains[k]):
            params.append(Param(k, "angle", j, f"{prism.faces[ca.face_a].label}/{prism.faces[ca.face_b].label}"))
        for f, face in enumerate(prism.faces):
            if face.role.is_optical:
                params.append(Param(k, "pyramidal", f, face.label))
        params += [Param(k, "nd"), Param(k, "vd"), Param(k, "mount_rot"), Param(k, "mount_tilt")]
    return Model(system, tuple(wavelengths_nm), np.asarray(n_glass, float), np.asarray(nd, float),
                 nominals, pts, nrm, piv, centres, heights, chains, tuple(params))
