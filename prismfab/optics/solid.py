"""A prism as a convex polyhedron in the system frame.

A point ``p`` (system frame, mm) is inside the solid when ``normals @ p <= offsets`` for every
face. Faces ``0 .. n-1`` are the side faces of the section polygon (face ``i`` from vertex ``i``
to ``i + 1``); face ``n`` is the lower end face (datum A, part Z = 0, label "BOTTOM") and face
``n + 1`` the upper end face (label "TOP"). End faces have role "end" and absorb like ground faces.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from prismfab.model import FaceRole, Prism

__all__ = ["END_ROLE", "ConvexSolid", "solid_of"]

END_ROLE = "end"
"""Role value of the two end faces (not a ``FaceRole``: they are never optical)."""


@dataclass(frozen=True, slots=True)
class ConvexSolid:
    """Outward face planes of one prism in the system frame.

    Args:
        name: prism name.
        material: catalogue key of the material.
        normals: outward unit normals, shape (F, 3), system frame; read-only.
        offsets_mm: plane offsets ``normal . p`` of each face, shape (F,), mm; read-only.
        roles: per face, the ``FaceRole`` value string, or "end" for the end faces.
        labels: per face, the side-face label, or "BOTTOM" / "TOP".
        rotation: part -> system rotation, shape (3, 3); read-only.
        translation_mm: part-frame origin in the system frame, shape (3,); read-only.
        vertices_mm: section polygon in the part frame, shape (n, 2); read-only.
        height_mm: prism height.
    """

    name: str
    material: str
    normals: NDArray[np.float64]
    offsets_mm: NDArray[np.float64]
    roles: tuple[str, ...]
    labels: tuple[str, ...]
    rotation: NDArray[np.float64]
    translation_mm: NDArray[np.float64]
    vertices_mm: NDArray[np.float64]
    height_mm: float

    @property
    def n_sides(self) -> int:
        """Number of side faces."""
        return int(self.vertices_mm.shape[0])

    def to_part(self, points_mm: NDArray[np.float64]) -> NDArray[np.float64]:
        """System-frame points (..., 3) -> part-frame points (..., 3) (inverse pose)."""
        return (np.asarray(points_mm, float) - self.translation_mm) @ self.rotation

    def face_coordinates(self, face: int, points_mm: NDArray[np.float64]) -> tuple[
            NDArray[np.float64], NDArray[np.float64]]:
        """(distance along side face ``face`` from its start vertex, height from datum A), mm."""
        p = self.to_part(points_mm)
        v0 = self.vertices_mm[face]
        v1 = self.vertices_mm[(face + 1) % self.n_sides]
        e = (v1 - v0) / np.linalg.norm(v1 - v0)
        return (p[..., 0] - v0[0]) * e[0] + (p[..., 1] - v0[1]) * e[1], p[..., 2]

    def contains(self, points_mm: NDArray[np.float64], *, tol_mm: float = 1e-9) -> NDArray[np.bool_]:
        """True for system-frame points (..., 3) inside or on the solid."""
        return np.all(np.asarray(points_mm) @ self.normals.T <= self.offsets_mm + tol_mm, axis=-1)


def _readonly(a: NDArray[np.float64]) -> NDArray[np.float64]:
    a = np.ascontiguousarray(a, dtype=float)
    a.setflags(write=False)
    return a


def solid_of(prism: Prism) -> ConvexSolid:
    """Face planes of ``prism`` in the system frame.

    Raises:
        ValueError: the section is not a counter-clockwise convex polygon.
    """
    v = np.asarray(prism.vertices_mm, float)
    edges = np.roll(v, -1, axis=0) - v
    lengths = np.hypot(edges[:, 0], edges[:, 1])
    if np.any(lengths <= 0.0):
        raise ValueError(f"prism {prism.name}: vertices_mm has a zero-length face; remove the repeated vertex")
    cross = edges[:, 0] * np.roll(edges, -1, axis=0)[:, 1] - edges[:, 1] * np.roll(edges, -1, axis=0)[:, 0]
    if np.any(cross <= 0.0):
        raise ValueError(
            f"prism {prism.name}: vertices_mm must be convex and counter-clockwise seen from +Z; "
            "reverse the vertex order or remove the reflex vertex"
        )
    n_part = np.zeros((v.shape[0] + 2, 3))
    n_part[:-2, 0] = edges[:, 1] / lengths
    n_part[:-2, 1] = -edges[:, 0] / lengths
    off_part = np.empty(v.shape[0] + 2)
    off_part[:-2] = n_part[:-2, 0] * v[:, 0] + n_part[:-2, 1] * v[:, 1]
    n_part[-2] = (0.0, 0.0, -1.0)
    off_part[-2] = 0.0
    n_part[-1] = (0.0, 0.0, 1.0)
    off_part[-1] = prism.height_mm
    rot = np.asarray(prism.pose.rotation, float)
    trans = np.asarray(prism.pose.translation_mm, float)
    normals = n_part @ rot.T
    offsets = off_part + normals @ trans
    roles = tuple(f.role.value for f in prism.faces) + (END_ROLE, END_ROLE)
    labels = tuple(f.label for f in prism.faces) + ("BOTTOM", "TOP")
    return ConvexSolid(
        name=prism.name, material=prism.material, normals=_readonly(normals),
        offsets_mm=_readonly(offsets), roles=roles, labels=labels, rotation=_readonly(rot),
        translation_mm=_readonly(trans), vertices_mm=_readonly(v), height_mm=float(prism.height_mm),
    )


ROLE_CODES: dict[str, int] = {
    FaceRole.ENTRY.value: 0,
    FaceRole.EXIT.value: 0,
    FaceRole.ENTRY_EXIT.value: 0,
    FaceRole.TIR.value: 1,
    FaceRole.MIRROR.value: 2,
    FaceRole.GROUND.value: 3,
    END_ROLE: 3,
}
"""What the tracer does at a face: 0 refract, 1 reflect by TIR, 2 mirror, 3 absorb."""
