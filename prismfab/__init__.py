"""prismfab: custom prism design spec -> solved, verified, vendor-ready fabrication package.

The curated public API lives here; everything else is reached through its subpackage.
Nothing heavy (cadquery, reportlab, ezdxf) is imported by ``import prismfab``.
"""

from __future__ import annotations

__version__ = "0.1.0"

from prismfab.errors import (
    DesignCheckError,
    MaterialError,
    MissingDependencyError,
    OutputError,
    PrismfabError,
    SolveError,
    SpecError,
)
from prismfab.model import (
    Beam,
    Face,
    FaceRole,
    Part,
    PartFace,
    Performance,
    Polarization,
    Pose,
    Prism,
    System,
    Tolerances,
)

__all__ = [
    "Beam",
    "DesignCheckError",
    "Face",
    "FaceRole",
    "MaterialError",
    "MissingDependencyError",
    "OutputError",
    "Part",
    "PartFace",
    "Performance",
    "Polarization",
    "Pose",
    "Prism",
    "PrismfabError",
    "SolveError",
    "SpecError",
    "System",
    "Tolerances",
    "__version__",
]
