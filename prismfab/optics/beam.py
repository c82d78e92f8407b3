"""Ray bundles that sample the input ``Beam``.

The beam frame: ``ez`` = beam direction, ``ex`` = in-plane axis perpendicular to it (in the x-z
plane of incidence; +x for the default beam along +z), ``ey = ez x ex`` (the out-of-plane axis,
+y by default). The 1/e^2 intensity radius is ``w = diameter / 2``; a Gaussian of intensity
``exp(-2 r^2 / w^2)`` has a position standard deviation ``w / 2`` per axis.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from prismfab.model import Beam
from prismfab.optics.trace import RayBundle, polarization_basis

__all__ = ["beam_frame", "envelope_rays", "grid_beam", "sample_beam"]


def beam_frame(beam: Beam) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Unit vectors (ex, ey, ez) of the beam frame, in the system frame."""
    ez = np.asarray(beam.direction, float)
    ez = ez / np.linalg.norm(ez)
    ex = polarization_basis(ez[None])[0]
    return ex, np.cross(ez, ex), ez


def _bundle(beam: Beam, xy_mm: NDArray[np.float64], angles_rad: NDArray[np.float64] | None,
            wavelength_nm: float, weights: NDArray[np.float64]) -> RayBundle:
    ex, ey, ez = beam_frame(beam)
    origins = np.asarray(beam.origin_mm, float) + xy_mm[:, :1] * ex + xy_mm[:, 1:2] * ey
    directions = np.broadcast_to(ez, origins.shape)
    if angles_rad is not None:
        directions = ez + angles_rad[:, :1] * ex + angles_rad[:, 1:2] * ey
    return RayBundle.create(origins, directions, wavelength_nm, polarization=beam.polarization,
                            weights=weights)


def sample_beam(beam: Beam, *, n_rays: int, wavelength_nm: float, seed: int = 0) -> RayBundle:
    """Random rays of an elliptical Gaussian beam (seeded, so reproducible).

    Positions are normal with standard deviation ``diameter / 4`` per axis (1/e^2 diameters of
    ``beam``); with a divergence, each ray is tilted by normal angles of standard deviation
    ``full-angle divergence / 4`` per axis. Every ray carries weight ``1 / n_rays``.

    Args:
        beam: the input beam (system frame).
        n_rays: number of rays.
        wavelength_nm: wavelength of every ray, nm.
        seed: random seed.
    """
    rng = np.random.default_rng(seed)
    sig = np.array([beam.diameter_in_plane_mm, beam.diameter_out_of_plane_mm]) / 4.0
    xy = rng.standard_normal((n_rays, 2)) * sig
    div = np.array([beam.divergence_in_plane_mrad, beam.divergence_out_of_plane_mrad]) * 1e-3 / 4.0
    angles = rng.standard_normal((n_rays, 2)) * div if np.any(div > 0.0) else None
    return _bundle(beam, xy, angles, wavelength_nm, np.full(n_rays, 1.0 / max(n_rays, 1)))


def grid_beam(beam: Beam, *, wavelength_nm: float, per_axis: int = 11, extent: float = 1.5) -> RayBundle:
    """Deterministic square grid over ``+/- extent`` 1/e^2 radii, weighted by the Gaussian intensity.

    Weights sum to 1 over the grid. Collimated (divergence ignored).
    """
    w = np.array([beam.diameter_in_plane_mm, beam.diameter_out_of_plane_mm]) / 2.0
    g = np.linspace(-extent, extent, per_axis)
    gx, gy = np.meshgrid(g, g, indexing="ij")
    xy = np.stack([gx.ravel() * w[0], gy.ravel() * w[1]], axis=1)
    weights = np.exp(-2.0 * (gx.ravel() ** 2 + gy.ravel() ** 2))
    return _bundle(beam, xy, None, wavelength_nm, weights / weights.sum())


def envelope_rays(beam: Beam, *, wavelength_nm: float, scale: float = 1.0) -> RayBundle:
    """Chief ray then the four 1/e^2 marginal rays: +x, -x (in plane), +y, -y (out of plane).

    ``scale`` multiplies the offsets (e.g. a tiny scale gives differential rays).
    """
    w = np.array([beam.diameter_in_plane_mm, beam.diameter_out_of_plane_mm]) / 2.0 * scale
    xy = np.array([[0.0, 0.0], [w[0], 0.0], [-w[0], 0.0], [0.0, w[1]], [0.0, -w[1]]])
    return _bundle(beam, xy, None, wavelength_nm, np.full(5, 0.2))
