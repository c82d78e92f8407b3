"""Anamorphic prism pair: in-plane magnification M with the output parallel to the input.

Two prisms in the compensating mounting (Duarte and Piper, Am. J. Phys. 51 (1983)): P1
deviates towards -x (apex on +x), P2 back towards +x. The chief-ray angle model
(``common.propagate_angles``) is solved for the unknowns (entry-normal direction and apex of
each prism) by Newton iteration from the normal-exit closed form (``normal_exit_incidence``),
with four equations:

* magnification: product of the face ratios ``k`` equals M (Duarte, Tunable Lasers Handbook,
  ch. 2);
* parallel output: output direction equals the input direction;
* per prism, its *normal face* (the exit face when expanding, the entry face when compressing,
  ``M < 1``, i.e. the expander used backwards) meets the chief ray at the anti-feedback tilt
  (``exit_tilt_deg``, common practice); with ``normal_exit: false`` the steep face is set
  to Brewster's angle instead (p light passes it with almost no loss);
* with ``achromatic: true`` the first-order angular dispersion (Duarte-Piper recursion,
  ``common.angular_dispersion``) must vanish at the design wavelength; that takes one degree of
  freedom, so the normal-face condition of the steep-first prism is dropped (the pair is
  over-constrained otherwise; compare Trebino, Appl. Opt. 24, 1130 (1985)), and the result is
  reported honestly, with a warning when an incidence lands above 80 deg.

Tuning (``design._pair_tuning``): with the apex angles fixed, rotating both prisms keeps the
output parallel along a one-parameter family. Two ranges are reported: the angle limits alone
(every incidence and exit angle <= 80 deg, no TIR), and what the sized prisms can do (beam
inside every clear aperture, rotated prisms not touching). For ``tuning_range`` the rotations
per M are tabulated and the faces are sized over them; without it the table spans the design
M x/÷ 1.1 within the sized prisms' reach, and the facts say so.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from prismfab.design import _pair_tuning as tuning
from prismfab.design import sizing
from prismfab.design.common import (
    PrismAngles,
    angular_dispersion,
    material_of,
    newton,
    polygons_overlap,
    propagate_angles,
    trace_plane,
    unit,
)
from prismfab.errors import DesignCheckError, SolveError
from prismfab.model import FaceRole, System
from prismfab.spec.types import AnamorphicPairDesign, Spec

__all__ = ["MAX_INCIDENCE_DEG", "design", "normal_exit_incidence", "solve_angles", "triangle_for"]

MAX_INCIDENCE_DEG = 80.0
"""Largest entry incidence a plain design may use (common practice: loss and tolerance grow fast)."""
GRAZING_LIMIT_DEG = 85.0
"""Largest incidence accepted at all (achromatic designs, tuning)."""
GAP_MM = 1.0
"""Smallest clearance between the two prisms of a compact pair (common practice)."""


def normal_exit_incidence(m: float, n: float) -> tuple[float, float]:
    """(entry incidence phi1, apex A), rad, of a normal-exit prism of magnification m > 1.

    Closed form derived from Snell's law with ``cos psi1 = m cos phi1``:
    ``sin phi1 = sqrt((m^2 - 1)/(m^2 - 1/n^2))``, ``A = asin(sin phi1 / n)``.
    """
    s = math.sqrt((m * m - 1.0) / (m * m - 1.0 / (n * n)))
    phi1 = math.asin(s)
    return phi1, math.asin(s / n)


def max_normal_exit_m(n: float, phi_max_deg: float = MAX_INCIDENCE_DEG) -> float:
    """Largest magnification of one normal-exit prism with the entry incidence at ``phi_max``."""
    phi = math.radians(phi_max_deg)
    return math.cos(math.asin(math.sin(phi) / n)) / math.cos(phi)


def _initial(mexp: float, ns: tuple[float, float], compress: bool) -> np.ndarray:
    """Closed-form start: equal magnification per prism, normal faces exactly normal."""
    m = math.sqrt(mexp)
    out = []
    theta = 0.0
    for j, n in enumerate(ns):
        sense = 1 if j == 0 else -1
        phi1, a = normal_exit_incidence(m, n)
        if compress:
            beta = theta  # normal entry
            theta = beta + sense * (a - phi1)
        else:
            beta = theta - sense * phi1
            theta = beta + sense * a  # exit normal = ray direction (normal exit)
        out += [beta, a]
    return np.array(out)


def solve_angles(*, magnification: float, ns: tuple[float, float], dns: tuple[float, float],
                 achromatic: bool, normal_exit: bool, tilt_rad: float
                 ) -> tuple[PrismAngles, PrismAngles] | None:
    """The two prism orientations meeting the pair conditions (see the module docstring).

    Args:
        magnification: target in-plane M (< 1 compresses).
        ns: index of P1 and P2 at the design wavelength.
        dns: dn/d(lambda) of P1 and P2, per um.
        achromatic: require zero first-order angular dispersion.
        normal_exit: normal faces (with ``tilt_rad``) rather than Brewster steep faces.
        tilt_rad: anti-feedback tilt of the normal faces.

    Returns:
        (P1, P2), or None when the iteration does not converge.
    """
    compress = magnification < 1.0
    mexp = 1.0 / magnification if compress else magnification
    x0 = _initial(mexp, ns, compress)
    base = _solve(x0, magnification, ns, dns, compress, normal_exit, tilt_rad, None, 1.0)
    if base is None or not achromatic:
        return _checked(base, ns)
    # achromatic: continuation from the plain pair, blending one face condition into the
    # zero-dispersion condition; both prisms are tried as the relaxed one, the solution with
    # the smaller largest incidence wins
    found = []
    for relax in (0, 1):
        x = base
        for t in np.linspace(0.05, 1.0, 20):
            x = _solve(x, magnification, ns, dns, compress, normal_exit, tilt_rad, relax, float(t))
            if x is None:
                break
        pr = _checked(x, ns)
        if pr is not None:
            _t, _m, ev = propagate_angles(0.0, pr, ns)
            found.append((max(abs(e.incidence_rad) for e in ev), pr))
    return min(found, key=lambda f: f[0])[1] if found else None


def _checked(x: np.ndarray | None, ns: tuple[float, float]) -> tuple[PrismAngles, PrismAngles] | None:
    if x is None:
        return None
    pr = (PrismAngles(x[0], x[1], 1), PrismAngles(x[2], x[3], -1))
    _t, _m, ev = propagate_angles(0.0, pr, ns)
    if max(abs(e.incidence_rad) for e in ev) > math.radians(89.0):
        return None
    return pr


def _solve(x0: np.ndarray, magnification: float, ns: tuple[float, float], dns: tuple[float, float],
           compress: bool, normal_exit: bool, tilt_rad: float, relax: int | None, blend: float
           ) -> np.ndarray | None:
    """Newton solve of the pair equations; ``relax`` blends that prism's face condition into
    the zero-dispersion condition by ``blend`` (0 = face condition, 1 = achromatic)."""
    senses = (1, -1)

    def residual(x: np.ndarray) -> np.ndarray:
        if x[1] <= 0 or x[3] <= 0:
            raise ValueError("apex must be positive")
        pr = [PrismAngles(x[0], x[1], 1), PrismAngles(x[2], x[3], -1)]
        theta, mag, ev = propagate_angles(0.0, pr, ns)
        r = [math.log(mag) - math.log(magnification), theta]
        for j in (0, 1):
            s = senses[j]
            if normal_exit:
                face = ev[2 * j] if compress else ev[2 * j + 1]
                fr = face.incidence_rad + s * tilt_rad
            else:
                bw = math.atan(ns[j])
                fr = (ev[2 * j + 1].refraction_rad + s * bw if compress
                      else ev[2 * j].incidence_rad - s * bw)
            if j == relax:
                disp = angular_dispersion(0.0, pr, ns, dns) * _DISP_SCALE
                fr = (1.0 - blend) * fr + blend * disp
            r.append(fr)
        return np.array(r)

    return newton(residual, x0)


_DISP_SCALE = 10.0  # rad/um -> comparable with angle residuals in rad


def design(spec: Spec) -> System:
    """Solve, size and assemble an anamorphic pair (see the module docstring).

    Raises:
        SolveError: M unreachable below the incidence limit, no achromatic solution, or the
            tuning range outside the reachable range (the message gives the reachable range).
    """
    d = spec.design
    assert isinstance(d, AnamorphicPairDesign)
    keys = (d.materials[0], d.materials[-1])
    mats = [material_of(spec, k, path=f"design.materials[{min(i, len(d.materials) - 1)}]")
            for i, k in enumerate(keys)]
    wl0 = spec.beam.wavelength_nm
    ns = (float(mats[0].n(wl0)), float(mats[1].n(wl0)))
    dns = (float(mats[0].dn_dlambda_per_um(wl0)), float(mats[1].dn_dlambda_per_um(wl0)))
    m = d.magnification
    mexp = max(m, 1.0 / m)
    if abs(mexp - 1.0) < 1e-3:
        raise SolveError("design.magnification", f"M = {m:g} needs no pair",
                         reachable="M below 0.999 or above 1.001")
    tilt = math.radians(d.exit_tilt_deg) if d.normal_exit else 0.0
    pair = solve_angles(magnification=m, ns=ns, dns=dns, achromatic=d.achromatic,
                        normal_exit=d.normal_exit, tilt_rad=tilt)
    swapped = False
    if pair is None and d.achromatic and keys[0] != keys[1]:
        pair = solve_angles(magnification=m, ns=ns[::-1], dns=dns[::-1], achromatic=True,
                            normal_exit=d.normal_exit, tilt_rad=tilt)
        if pair is not None:
            swapped, mats, ns = True, mats[::-1], ns[::-1]
    mmax = max_normal_exit_m(ns[0]) * max_normal_exit_m(ns[1])
    names = " and ".join(dict.fromkeys(m_.name for m_ in mats))
    if pair is None and not d.normal_exit and not d.achromatic:
        # Brewster entries fix k1 = n per prism and k2 <= 1, so M <= n1 n2 (Duarte (ed.),
        # Tunable Lasers Handbook, ch. 3)
        raise SolveError("design.magnification",
                         f"with Brewster entry faces ({names} at {wl0:g} nm) a pair reaches at "
                         f"most M = {ns[0] * ns[1]:.3f}",
                         reachable=f"M = {1 / (ns[0] * ns[1]):.3f} to {ns[0] * ns[1]:.3f}, or "
                         "normal_exit: true")
    if pair is None:
        if d.achromatic:
            raise SolveError(
                "design.achromatic",
                f"no achromatic pair of {names} reaches M = {m:g} at {wl0:g} nm with the "
                "incidence below 89 deg", reachable="try two glasses of very different "
                "dispersion (a crown and a dense flint), a lower M, or achromatic: false")
        raise SolveError("design.magnification",
                         f"with {names} at {wl0:g} nm a pair reaches at most M = {mmax:.3f} "
                         f"below {MAX_INCIDENCE_DEG:g} deg incidence",
                         reachable=f"M = {1 / mmax:.3f} to {mmax:.3f}")
    _t, _mag, ev = propagate_angles(0.0, pair, ns)
    worst = max(math.degrees(abs(e.incidence_rad)) for e in ev)
    warnings = []
    if swapped:
        warnings.append(f"the achromatic condition is met only with {mats[0].name} first: "
                        "the prisms follow that order (P1 = " + mats[0].key + ")")
    if worst > MAX_INCIDENCE_DEG:
        if not d.achromatic:
            raise SolveError("design.magnification",
                             f"with {names} at {wl0:g} nm a pair reaches at most M = {mmax:.3f} "
                             f"below {MAX_INCIDENCE_DEG:g} deg incidence",
                             reachable=f"M = {1 / mmax:.3f} to {mmax:.3f}")
        warnings.append(f"the achromatic solution lands near grazing incidence ({worst:.1f} deg): "
                        "high loss and tight angle tolerances; three or more prisms relax this")
    return _build(spec, d, pair, mats, ns, warnings)


def _tuning_rows(d: AnamorphicPairDesign, pair: tuple[PrismAngles, PrismAngles],
                 ns: tuple[float, float]) -> tuple[list[tuple[float, float, float]], tuple[float, float]]:
    """Rows over ``tuning_range`` (5 M values), and the angle-limited range of M.

    Raises:
        SolveError: the tuning range passes the angle limits (or no rotation reaches an M).
    """
    lo, hi = tuning.angle_range(pair, ns, d.magnification, max_incidence_deg=MAX_INCIDENCE_DEG)
    if d.tuning_range is None:
        return [], (lo, hi)
    t_lo, t_hi = d.tuning_range
    reach = f"M = {lo:.3f} to {hi:.3f} (incidence <= {MAX_INCIDENCE_DEG:g} deg, no TIR)"
    if t_lo < lo * (1 - 1e-9) or t_hi > hi * (1 + 1e-9):
        raise SolveError("design.tuning_range",
                         f"rotating the prisms reaches M = {lo:.3f} to {hi:.3f} with the output "
                         f"parallel and every incidence at most {MAX_INCIDENCE_DEG:g} deg; the "
                         f"range {t_lo:g} to {t_hi:g} is not reachable", reachable=reach)
    rows = tuning.rows_over(pair, ns, d.magnification, np.linspace(t_lo, t_hi, 5),
                            max_incidence_deg=MAX_INCIDENCE_DEG)
    if rows is None:
        raise SolveError("design.tuning_range", "the tuning solution is lost inside the range",
                         reachable=reach)
    return rows, (lo, hi)


DEFAULT_SPAN = 1.10
"""Without ``tuning_range`` the table spans the design M times/over this, within the parts' reach."""


def _tuning_table(spec: Spec, d: AnamorphicPairDesign, system: System, drafts: list,
                  pair: tuple[PrismAngles, PrismAngles], ns: tuple[float, float],
                  rows: list, angle_reach: tuple[float, float]) -> System:
    """Add the reachable ranges (angle limits, and the sized parts) and the tuning table."""
    m0 = d.magnification
    lo, hi = tuning.part_range(spec, system, drafts, pair, ns, m0,
                               max_incidence_deg=MAX_INCIDENCE_DEG)
    lim = f"{MAX_INCIDENCE_DEG:g}"
    facts = list(system.facts) + [
        (f"tuning range M min (angle limits: incidence <= {lim} deg, no TIR)", angle_reach[0], ""),
        (f"tuning range M max (angle limits: incidence <= {lim} deg, no TIR)", angle_reach[1], ""),
        ("tuning range M min (these prisms: beam inside the clear apertures)", lo, ""),
        ("tuning range M max (these prisms: beam inside the clear apertures)", hi, "")]
    if d.tuning_range is not None:
        t_lo, t_hi = d.tuning_range
        if t_lo < lo * (1 - 1e-6) or t_hi > hi * (1 + 1e-6):
            raise SolveError("design.tuning_range", f"the sized prisms hold the beam from "
                             f"M = {lo:.3f} to {hi:.3f} only (the rotated prisms touch, or the "
                             "beam leaves a clear aperture)",
                             reachable=f"M = {lo:.3f} to {hi:.3f}, or a larger separation_mm")
    else:
        span = (max(lo, m0 / DEFAULT_SPAN), min(hi, m0 * DEFAULT_SPAN))
        rows = tuning.rows_over(pair, ns, m0, np.linspace(span[0], span[1], 5),
                                max_incidence_deg=MAX_INCIDENCE_DEG) or []
        facts += [("tuning table: default span (no tuning_range; prisms sized for the design "
                   "M only), M min", span[0], ""),
                  ("tuning table: default span (no tuning_range; prisms sized for the design "
                   "M only), M max", span[1], "")]
    return replace(system, facts=tuple(facts), tuning=tuple(tuple(r) for r in rows))


def triangle_for(pa: PrismAngles, entry: np.ndarray, s: float, closing: str) -> sizing.Triangle:
    """The triangle of a prism whose chief entry point ``entry`` lies ``s`` mm from its apex."""
    b, g, sense = pa.beta_rad, pa.exit_normal_rad, pa.sense
    u = sense * np.array([-math.sin(b), math.cos(b)])  # along the entry face towards the apex
    v = sense * np.array([math.sin(g), -math.cos(g)])  # along the exit face away from the apex
    apex = entry + s * u
    d1, d2 = -u, v
    if closing == "exit":
        nc = d2.copy()
    elif closing == "entry":
        nc = d1.copy()
    else:
        nc = (d1 + d2) / np.linalg.norm(d1 + d2)
    return sizing.Triangle(apex, d1, d2, nc, (FaceRole.ENTRY, FaceRole.EXIT, FaceRole.GROUND),
                           ("", "", "mounting base"))


def _build(spec: Spec, d: AnamorphicPairDesign, pair: tuple[PrismAngles, PrismAngles], mats: list,
           ns: tuple[float, float], warnings: list[str]) -> System:
    rows, (lo, hi) = _tuning_rows(d, pair, ns)
    rot1 = (0.0, *(math.radians(r[1]) for r in rows))
    rot2 = (0.0, *(math.radians(r[2]) for r in rows))
    states = len(rot1)
    compress = d.magnification < 1.0
    closing = "entry" if compress else "exit"
    if not d.normal_exit:
        closing = "bisector"
    idx = [lambda wl, m_=m_: float(m_.n(wl)) for m_ in mats]
    start = -1.0e3
    groups = sizing.beam_groups(spec, start_z_mm=start, states=states, pivot_z_mm=0.0)
    # P1
    e1 = np.zeros(2)

    def trace1(verts: np.ndarray, roles: tuple) -> list:
        return sizing.trace_groups([sizing.Placed(verts, roles, idx[0], e1, rot1)], groups,
                                  sequential=True)

    t1 = sizing.size_triangle(spec, make=lambda s: triangle_for(pair[0], e1, s, closing),
                              trace=trace1, section=0, path="design")
    p1 = sizing.Placed(t1.vertices, t1.roles, idx[0], e1, rot1)
    chief = trace_plane([p1.section(0, spec.beam.wavelength_nm)], (start, 0.0), 0.0)
    x1, th1 = chief.points[-2], math.atan2(chief.direction[1], chief.direction[0])

    def place2(sep: float) -> tuple[sizing.SizedTriangle, np.ndarray] | None:
        e2 = x1 + sep * unit(th1)

        def trace2(verts: np.ndarray, roles: tuple) -> list:
            return sizing.trace_groups([p1, sizing.Placed(verts, roles, idx[1], e2, rot2)], groups,
                                       sequential=True)

        try:
            t2 = sizing.size_triangle(spec, make=lambda s: triangle_for(pair[1], e2, s, closing),
                                      trace=trace2, section=1, path="design")
        except DesignCheckError:
            return None  # P2 cannot take the beam this close to P1
        return t2, e2

    def clash(placed2: tuple[sizing.SizedTriangle, np.ndarray] | None) -> bool:
        if placed2 is None:
            return True
        t2, e2 = placed2
        p2 = sizing.Placed(t2.vertices, t2.roles, idx[1], e2, rot2)
        return any(polygons_overlap(p1.vertices_at(k), p2.vertices_at(k), gap_mm=GAP_MM)
                   for k in range(states))

    if d.separation_mm is not None:
        sep = d.separation_mm
        best = place2(sep)
        if clash(best):
            raise SolveError("design.separation_mm", f"at {sep:g} mm the prisms touch or clash",
                             reachable="a larger separation, or leave it out for a compact pair")
    else:
        sep, best = _compact(place2, clash, p1, x1, th1, states)
    assert best is not None
    t2, e2 = best
    drafts = [
        sizing.Draft("P1", mats[0].key, idx[0], t1.vertices, t1.roles, t1.notes, e1, rot1),
        sizing.Draft("P2", mats[1].key, idx[1], t2.vertices, t2.roles, t2.notes, e2, rot2),
    ]
    facts = _facts(spec, pair, mats, ns, sep, drafts)
    system = sizing.finish_system(spec, drafts, facts=facts, warnings=warnings, pivot_z_mm=0.0)
    return _tuning_table(spec, d, system, drafts, pair, ns, rows, (lo, hi))


def _compact(place2, clash, p1: sizing.Placed, x1: np.ndarray, th1: float, states: int):
    """Smallest separation (0.1 mm steps) at which P2 clears P1 by ``GAP_MM``.

    P2 is sized once at a trial separation, slid along the chief ray by bisection (its size
    hardly depends on the separation), then sized again where it lands and checked.
    """
    v = p1.vertices
    sep = 2.0 * max(float(np.linalg.norm(v[i] - v[i - 1])) for i in range(len(v)))
    best = place2(sep)
    while best is None:
        sep *= 1.6
        if sep > 5e3:
            raise SolveError("design.separation_mm", "no separation keeps the prisms apart",
                             reachable="a smaller beam or magnification")
        best = place2(sep)
    t2, _e2 = best
    step = unit(th1)

    def overlaps(s_mm: float) -> bool:
        v = t2.vertices + (s_mm - sep) * step
        return any(polygons_overlap(p1.vertices_at(k), v if k == 0 else v, gap_mm=GAP_MM)
                   for k in range(1))

    lo, hi = 0.0, sep
    while overlaps(hi):
        lo, hi = hi, hi * 1.6
    for _ in range(30):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if overlaps(mid) else (lo, mid)
    sep = sizing.round_up(hi)
    for _ in range(50):
        best = place2(sep)
        if not clash(best):
            return sep, best
        sep = sizing.round_up(sep + max(0.1, 0.05 * sep))
    raise SolveError("design.separation_mm", "no separation keeps the prisms apart",
                     reachable="set design.separation_mm explicitly")


def _facts(spec: Spec, pair: tuple[PrismAngles, PrismAngles], mats: list, ns: tuple[float, float],
           sep: float, drafts: list) -> list[tuple[str, float, str]]:
    wl0 = spec.beam.wavelength_nm
    _t, mag, ev = propagate_angles(0.0, pair, ns)
    facts: list[tuple[str, float, str]] = [("magnification (angle model)", mag, "")]
    for j, pa in enumerate(pair):
        name = f"P{j + 1}"
        facts += [(f"apex angle {name}", math.degrees(pa.apex_rad), "deg"),
                  (f"entry incidence {name}", math.degrees(abs(ev[2 * j].incidence_rad)), "deg"),
                  (f"exit angle {name}", math.degrees(abs(ev[2 * j + 1].refraction_rad)), "deg"),
                  (f"magnification {name}", ev[2 * j].k * ev[2 * j + 1].k, "")]
    facts.append(("prism separation (chief-ray path P1 exit to P2 entry)", sep, "mm"))
    placed = [dr.placed() for dr in drafts]
    chief = trace_plane([p.section(0, wl0) for p in placed], (-1e3, 0.0), 0.0)
    facts.append(("lateral offset", float(chief.points[-1][1]), "mm"))
    dns = [float(m_.dn_dlambda_per_um(wl0)) for m_ in mats]
    facts.append(("angular dispersion at design wavelength",
                  angular_dispersion(0.0, pair, ns, dns) * 1e3 / 1e3, "rad/um"))
    for wl in sizing.wavelengths_nm(spec)[1:]:
        th, _m, _e = propagate_angles(0.0, pair, [float(m_.n(wl)) for m_ in mats])
        facts.append((f"pointing at {wl:g} nm", th * 1e3, "mrad"))
    return facts
