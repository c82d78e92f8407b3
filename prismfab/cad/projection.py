"""Hidden-line projections of a part for the drawing sheets (vector polylines, no DXF here).

Each view projects the bevelled part solid orthographically with OCCT's exact hidden-line
removal (``HLRBRep_Algo``) and returns 2D polylines in millimetres, split into visible and
hidden. View coordinates: the view's x axis is ``x_direction``, its y axis is
``view_direction × x_direction``, both through the part-frame origin (the datum vertex). So the
principal section view from +Z gives part-frame (X, Y) exactly, and the side view from -Y gives
(X, Z).

Clean-up: edges at the back that project onto a visible edge (the lower end face's outline under
the upper one, back and front bevel edges) come out of HLR as both visible and hidden. Straight
segments are therefore merged per carrier line, and hidden stretches that a visible segment
covers are removed; duplicated visible segments are merged. Coordinates are rounded to 1 nm and
sorted, so the same part always gives the same lists.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from prismfab.model import Part, Vec2, Vec3

__all__ = [
    "ISOMETRIC_VIEW",
    "SECTION_VIEW",
    "SIDE_VIEW",
    "ProjectedView",
    "ViewSpec",
    "project_shape",
    "project_views",
]

ROUND_DIGITS = 6
"""Output coordinates are rounded to this many decimals of a millimetre (1 nm)."""
SAME_LINE_MM = 1e-6
"""Two segments share a carrier line when their offsets differ by less than this (mm)."""
SAME_DIRECTION = 1e-9
"""... and the sine of the angle between them is below this."""
DEFLECTION_MM = 0.002
"""Chord height allowed when a curved edge is turned into a polyline (mm)."""

Polyline = tuple[Vec2, ...]
Span = tuple[float, float]


@dataclass(frozen=True, slots=True)
class ViewSpec:
    """An orthographic view.

    Args:
        name: e.g. "section".
        view_direction: unit vector from the part towards the viewer, part frame.
        x_direction: the view's horizontal axis, part frame (perpendicular to the view direction).
    """

    name: str
    view_direction: Vec3
    x_direction: Vec3


SECTION_VIEW = ViewSpec("section", (0.0, 0.0, 1.0), (1.0, 0.0, 0.0))
"""Principal section seen from +Z: view coordinates = part (X, Y)."""
SIDE_VIEW = ViewSpec("side", (0.0, -1.0, 0.0), (1.0, 0.0, 0.0))
"""Seen from -Y, height upwards: view coordinates = part (X, Z)."""
_S3, _S2 = 1.0 / math.sqrt(3.0), 1.0 / math.sqrt(2.0)
ISOMETRIC_VIEW = ViewSpec("isometric", (_S3, -_S3, _S3), (_S2, _S2, 0.0))
"""Isometric view (ISO 128 axonometry), height upwards."""


@dataclass(frozen=True, slots=True)
class ProjectedView:
    """One projected view of a part.

    Args:
        view: the view it was made for.
        visible: visible edges as polylines, view coordinates, mm.
        hidden: hidden edges (not covered by a visible one), view coordinates, mm.
    """

    view: ViewSpec
    visible: tuple[Polyline, ...]
    hidden: tuple[Polyline, ...]

    @property
    def bounds_mm(self) -> tuple[Vec2, Vec2]:
        """(min x, min y), (max x, max y) over all polylines, view coordinates."""
        pts = np.array([p for line in self.visible + self.hidden for p in line])
        lo, hi = pts.min(axis=0), pts.max(axis=0)
        return (float(lo[0]), float(lo[1])), (float(hi[0]), float(hi[1]))


def project_views(part: Part, views: Sequence[ViewSpec] = (SECTION_VIEW, SIDE_VIEW)
                  ) -> tuple[ProjectedView, ...]:
    """Project the part's bevelled solid into each view.

    Args:
        part: the part (its solid is built in the part frame).
        views: the views, default the principal section from +Z and the side view from -Y.

    Raises:
        DesignCheckError: a bevel does not fit.
    """
    from prismfab.cad.solid import build_solid

    shape = build_solid(part).shape
    return tuple(project_shape(shape, view) for view in views)


def project_shape(shape: Any, view: ViewSpec) -> ProjectedView:
    """Hidden-line projection of any OCCT shape (see ``project_views``)."""
    from OCP.gp import gp_Ax2, gp_Dir, gp_Pnt
    from OCP.HLRAlgo import HLRAlgo_Projector
    from OCP.HLRBRep import HLRBRep_Algo, HLRBRep_HLRToShape

    algo = HLRBRep_Algo()
    algo.Add(shape)
    axes = gp_Ax2(gp_Pnt(0.0, 0.0, 0.0), gp_Dir(*view.view_direction), gp_Dir(*view.x_direction))
    algo.Projector(HLRAlgo_Projector(axes))
    algo.Update()
    algo.Hide()
    result = HLRBRep_HLRToShape(algo)
    vis_lines, vis_curves = _collect((result.VCompound(), result.OutLineVCompound()))
    hid_lines, hid_curves = _collect((result.HCompound(), result.OutLineHCompound()))
    visible, hidden = _clean(vis_lines, hid_lines)
    return ProjectedView(view, _sorted(visible + vis_curves), _sorted(hidden + hid_curves))


def _collect(compounds: Sequence[Any]) -> tuple[list[Polyline], list[Polyline]]:
    """Straight segments and curved polylines of the edges in the given (maybe null) shapes."""
    from OCP.BRepAdaptor import BRepAdaptor_Curve
    from OCP.GCPnts import GCPnts_QuasiUniformDeflection
    from OCP.GeomAbs import GeomAbs_Line
    from OCP.TopAbs import TopAbs_EDGE
    from OCP.TopExp import TopExp_Explorer
    from OCP.TopoDS import TopoDS

    lines: list[Polyline] = []
    curves: list[Polyline] = []
    for compound in compounds:
        if compound is None or compound.IsNull():
            continue
        explorer = TopExp_Explorer(compound, TopAbs_EDGE)
        while explorer.More():
            curve = BRepAdaptor_Curve(TopoDS.Edge_s(explorer.Current()))
            if curve.GetType() == GeomAbs_Line:
                ends = (curve.Value(curve.FirstParameter()), curve.Value(curve.LastParameter()))
                lines.append(tuple((p.X(), p.Y()) for p in ends))
            else:
                sample = GCPnts_QuasiUniformDeflection(curve, DEFLECTION_MM)
                pts = (sample.Value(i + 1) for i in range(sample.NbPoints()))
                curves.append(tuple((p.X(), p.Y()) for p in pts))
            explorer.Next()
    return lines, curves


def _carrier(seg: Polyline) -> tuple[np.ndarray, float, float, float] | None:
    """Unit direction (canonical sign), line offset, and the two end parameters of a segment."""
    p, q = np.array(seg[0]), np.array(seg[-1])
    d = q - p
    length = float(np.hypot(*d))
    if length < SAME_LINE_MM:
        return None
    d = d / length
    if d[0] < -SAME_DIRECTION or (abs(d[0]) <= SAME_DIRECTION and d[1] < 0):
        d = -d
    n = np.array([-d[1], d[0]])
    t0, t1 = sorted((float(d @ p), float(d @ q)))
    return d, float(n @ p), t0, t1


def _clean(visible: list[Polyline], hidden: list[Polyline]
           ) -> tuple[list[Polyline], list[Polyline]]:
    """Merge collinear segments; drop hidden stretches covered by visible ones."""
    groups: list[tuple[np.ndarray, float, list[Span], list[Span]]] = []
    for kind, segs in ((0, visible), (1, hidden)):
        for seg in segs:
            found = _carrier(seg)
            if found is None:
                continue
            d, c, t0, t1 = found
            for gd, gc, vis, hid in groups:
                if abs(gd[0] * d[1] - gd[1] * d[0]) < SAME_DIRECTION and abs(gc - c) < SAME_LINE_MM:
                    (vis if kind == 0 else hid).append((t0, t1))
                    break
            else:
                groups.append((d, c, [(t0, t1)] if kind == 0 else [], [(t0, t1)] if kind else []))
    out_vis: list[Polyline] = []
    out_hid: list[Polyline] = []
    for d, c, vis, hid in groups:
        n = np.array([-d[1], d[0]])
        vis_u = _union(vis)
        for target, spans in ((out_vis, vis_u), (out_hid, _subtract(_union(hid), vis_u))):
            for t0, t1 in spans:
                a, b = c * n + t0 * d, c * n + t1 * d
                target.append(((float(a[0]), float(a[1])), (float(b[0]), float(b[1]))))
    return out_vis, out_hid


def _union(spans: list[tuple[float, float]]) -> list[tuple[float, float]]:
    out: list[tuple[float, float]] = []
    for t0, t1 in sorted(spans):
        if out and t0 <= out[-1][1] + SAME_LINE_MM:
            out[-1] = (out[-1][0], max(out[-1][1], t1))
        else:
            out.append((t0, t1))
    return out


def _subtract(spans: list[tuple[float, float]], cover: list[tuple[float, float]]
              ) -> list[tuple[float, float]]:
    out = []
    for t0, t1 in spans:
        pieces = [(t0, t1)]
        for c0, c1 in cover:
            pieces = [piece for a, b in pieces for piece in ((a, min(b, c0)), (max(a, c1), b))
                      if piece[1] - piece[0] > SAME_LINE_MM]
        out.extend(pieces)
    return out


def _sorted(lines: list[Polyline]) -> tuple[Polyline, ...]:
    def tidy(v: float) -> float:
        return round(v, ROUND_DIGITS) + 0.0  # + 0.0 turns -0.0 into 0.0

    rounded = {tuple((tidy(x), tidy(y)) for x, y in line) for line in lines}
    return tuple(sorted(rounded))
