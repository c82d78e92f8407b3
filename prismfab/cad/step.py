"""Part STEP files: one solid in the part frame, named, face-labelled and coloured.

Format choice: STEP AP214 (ISO 10303-214, ``AUTOMOTIVE_DESIGN`` schema), because it is the
application protocol CAD and CAM readers support most widely and it carries product names, face
names, presentation layers and surface colours, which is all a part file needs here. AP242 can
be chosen with ``schema=StepSchema.AP242`` for readers that prefer it; the geometry is the same.

Contents, millimetres, part frame (datum vertex at the origin, section in XY, height along +Z):

* ``PRODUCT``: id = the part number, name = ``"<part number> <title>"`` exactly, description =
  the material name.
* every side face is an ``ADVANCED_FACE`` named ``"face <label> (<role>)"``, e.g.
  ``"face B (entry)"``, on a presentation layer of the same name in capitals (some readers show
  layers but not face names); the end faces are ``"face TOP (end)"`` and
  ``"face BOTTOM (datum A)"``; bevel faces stay unnamed.
* colours: optical faces are coloured by role, ground faces grey, the body a pale glass tint.

Determinism: the file goes through the XCAF writer, which names the product from its label (the
plain writer appends a per-process counter), and the header is set after the transfer with a
fixed time stamp, author, organisation and originating system, so two runs, in one process or
in two, write identical bytes. The write goes to a temporary file in the target folder, then a
rename, so a failed write never leaves a half-written file.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from enum import Enum
from pathlib import Path
from typing import Any

from prismfab.errors import OutputError
from prismfab.model import FaceRole, Part

__all__ = [
    "FIXED_TIMESTAMP",
    "ROLE_COLOURS",
    "StepSchema",
    "face_name",
    "part_step",
]

FIXED_TIMESTAMP = "2000-01-01T00:00:00"
"""STEP header time stamp: fixed so identical input gives identical bytes."""
ORIGINATING_SYSTEM = "prismfab"

GLASS_COLOUR = (0.78, 0.88, 0.93)
"""sRGB of the body and the bevel faces (a pale glass tint)."""
ROLE_COLOURS: dict[FaceRole, tuple[float, float, float]] = {
    FaceRole.ENTRY: (0.20, 0.65, 0.25),
    FaceRole.EXIT: (0.15, 0.40, 0.85),
    FaceRole.ENTRY_EXIT: (0.10, 0.60, 0.65),
    FaceRole.TIR: (0.85, 0.55, 0.10),
    FaceRole.MIRROR: (0.80, 0.70, 0.25),
    FaceRole.GROUND: (0.55, 0.55, 0.55),
}
"""sRGB colour of each side-face role, so optical faces stand apart from ground ones."""
END_FACE_COLOUR = (0.55, 0.55, 0.55)


class StepSchema(Enum):
    """The STEP application protocol written."""

    AP214 = "AP214IS"
    AP242 = "AP242DIS"


def face_name(label: str, role: FaceRole | None) -> str:
    """The STEP name of a face: ``"face B (entry)"``; end faces pass ``role=None``."""
    if role is None:
        return f"face {label} ({'datum A' if label == 'BOTTOM' else 'end'})"
    return f"face {label} ({role.value})"


def product_name(part: Part) -> str:
    """The STEP product name of a part: part number and title."""
    return f"{part.number} {part.title}"


def part_step(part: Part, path: str | os.PathLike[str], *,
              schema: StepSchema = StepSchema.AP214) -> Path:
    """Write the part's bevelled solid as a STEP file, in the part frame, millimetres.

    Args:
        part: the part.
        path: the file to write (replaced atomically if it exists).
        schema: the application protocol.

    Returns:
        The path written.

    Raises:
        DesignCheckError: a bevel does not fit.
        OutputError: the file cannot be written.
    """
    from prismfab.cad.solid import build_solid

    built = build_solid(part)
    doc = new_document()
    add_part(doc, part, built.shape)
    target = Path(path)
    write_document(doc, target, products={part.number: (part.number, product_name(part),
                                                        part.material_name)},
                   file_name=part.number, description=f"{product_name(part)}; "
                   f"{part.material_name}; part frame; mm", schema=schema)
    return target


def new_document() -> Any:
    """An empty XCAF document (assembly tree, names, colours, layers)."""
    from OCP.TCollection import TCollection_ExtendedString
    from OCP.TDocStd import TDocStd_Document
    from OCP.XCAFApp import XCAFApp_Application
    from OCP.XCAFDoc import XCAFDoc_DocumentTool

    doc = TDocStd_Document(TCollection_ExtendedString("XmlOcaf"))
    XCAFApp_Application.GetApplication_s().InitDocument(doc)
    XCAFDoc_DocumentTool.ShapeTool_s(doc.Main()).SetAutoNaming_s(False)
    return doc


def set_name(label: Any, name: str) -> None:
    """Name an XCAF label."""
    from OCP.TCollection import TCollection_ExtendedString
    from OCP.TDataStd import TDataStd_Name

    TDataStd_Name.Set_s(label, TCollection_ExtendedString(name))


def set_colour(doc: Any, label: Any, rgb: tuple[float, float, float], *, surface: bool) -> None:
    """Colour a label; the values are sRGB and are written as given."""
    from OCP.Quantity import Quantity_Color, Quantity_TOC_sRGB
    from OCP.XCAFDoc import XCAFDoc_ColorGen, XCAFDoc_ColorSurf, XCAFDoc_DocumentTool

    tool = XCAFDoc_DocumentTool.ColorTool_s(doc.Main())
    kind = XCAFDoc_ColorSurf if surface else XCAFDoc_ColorGen
    tool.SetColor(label, Quantity_Color(*rgb, Quantity_TOC_sRGB), kind)


def add_part(doc: Any, part: Part, shape: Any, *, colours: bool = True) -> Any:
    """Add a part's solid as a named product with named (and coloured) faces.

    Args:
        doc: the XCAF document.
        part: the part.
        shape: its solid, in the part frame.
        colours: give the body and the faces colours.

    Returns:
        The part's XCAF label.
    """
    from OCP.TCollection import TCollection_ExtendedString
    from OCP.XCAFDoc import XCAFDoc_DocumentTool

    from prismfab.cad.solid import face_planes, find_face

    shapes = XCAFDoc_DocumentTool.ShapeTool_s(doc.Main())
    layers = XCAFDoc_DocumentTool.LayerTool_s(doc.Main())
    label = shapes.AddShape(shape, False)
    set_name(label, part.number)
    if colours:
        set_colour(doc, label, GLASS_COLOUR, surface=True)
    roles = {f.label: f.role for f in part.prism.faces}
    for plane in face_planes(part):
        role = roles.get(plane.name)
        sub = shapes.AddSubShape(label, find_face(shape, plane))
        if sub.IsNull():
            raise LookupError(f"face {plane.name} is not a sub-shape of part {part.number}")
        name = face_name(plane.name, role)
        set_name(sub, name)
        layers.SetLayer(sub, layers.AddLayer(TCollection_ExtendedString(name.upper())))
        if colours:
            set_colour(doc, sub, ROLE_COLOURS[role] if role else END_FACE_COLOUR, surface=True)
    return label


def write_document(doc: Any, path: Path, *, products: dict[str, tuple[str, str, str]],
                   file_name: str, description: str, schema: StepSchema) -> None:
    """Transfer an XCAF document to STEP with a fixed header and write it atomically.

    Args:
        doc: the XCAF document.
        path: the file to write.
        products: label name -> (id, name, description) written on that ``PRODUCT``.
        file_name: the header's file name field.
        description: the header's description.
        schema: the application protocol.

    Raises:
        OutputError: the file cannot be written.
    """
    from OCP.IFSelect import IFSelect_RetDone
    from OCP.STEPCAFControl import STEPCAFControl_Writer
    from OCP.STEPControl import STEPControl_AsIs
    from OCP.XSControl import XSControl_WorkSession

    from prismfab.cad.solid import quiet_kernel

    quiet_kernel()
    writer = STEPCAFControl_Writer(XSControl_WorkSession(), False)
    _set_statics(schema)  # after the writer exists: before that the statics are not registered
    for mode in (writer.SetNameMode, writer.SetColorMode, writer.SetLayerMode):
        mode(True)
    if not writer.Transfer(doc, STEPControl_AsIs):
        raise OutputError(f"cannot write STEP file {path}: the CAD kernel could not transfer "
                          "the solid")
    model = writer.ChangeWriter().Model()
    _rename_products(model, products)
    _number_usages(model)
    _set_header(model, file_name=file_name, description=description)
    tmp = _temp_path(path)
    try:
        if writer.Write(str(tmp)) != IFSelect_RetDone:
            raise OutputError(f"cannot write STEP file {path}: the writer failed; check that "
                              "the folder is writable and has free space")
        os.replace(tmp, path)
    finally:
        with contextlib.suppress(FileNotFoundError):
            tmp.unlink()


def _temp_path(path: Path) -> Path:
    try:
        fd, name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    except OSError as err:
        raise OutputError(f"cannot write STEP file {path}: {err.strerror}; check that the "
                          "folder exists and is writable") from err
    os.close(fd)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(name, 0o666 & ~umask)  # the mode a plain open() would give, not mkstemp's 0600
    return Path(name)


def _set_statics(schema: StepSchema) -> None:
    """Set every STEP writer static we rely on (they are process-global and leak)."""
    from OCP.Interface import Interface_Static

    settings_c = {"write.step.schema": schema.value, "write.step.unit": "MM",
                  "xstep.cascade.unit": "MM"}
    settings_i = {"write.stepcaf.subshapes.name": 1, "write.surfacecurve.mode": 1,
                  "write.precision.mode": 0}
    for key, text in settings_c.items():
        if not Interface_Static.SetCVal_s(key, text):
            raise RuntimeError(f"STEP static {key} was not accepted")
    for key, value in settings_i.items():
        if not Interface_Static.SetIVal_s(key, value):
            raise RuntimeError(f"STEP static {key} was not accepted")


def _rename_products(model: Any, products: dict[str, tuple[str, str, str]]) -> None:
    from OCP.StepBasic import StepBasic_Product
    from OCP.TCollection import TCollection_HAsciiString

    for i in range(1, model.NbEntities() + 1):
        entity = model.Value(i)
        if not isinstance(entity, StepBasic_Product):
            continue
        wanted = products.get(entity.Name().ToCString())
        if wanted is not None:
            entity.SetId(TCollection_HAsciiString(wanted[0]))
            entity.SetName(TCollection_HAsciiString(wanted[1]))
            entity.SetDescription(TCollection_HAsciiString(wanted[2]))


def _number_usages(model: Any) -> None:
    """Number the assembly usage occurrences 1, 2, ... in file order.

    The kernel's STEP writer takes these ids from a counter that lives as long as the process,
    so a second assembly written by the same process (a batch worker) would get 4, 5, 6 where
    the first got 1, 2, 3: the same input would not give the same bytes.
    """
    from OCP.StepRepr import StepRepr_NextAssemblyUsageOccurrence
    from OCP.TCollection import TCollection_HAsciiString

    count = 0
    for i in range(1, model.NbEntities() + 1):
        entity = model.Value(i)
        if isinstance(entity, StepRepr_NextAssemblyUsageOccurrence):
            count += 1
            entity.SetId(TCollection_HAsciiString(str(count)))


def _set_header(model: Any, *, file_name: str, description: str) -> None:
    from OCP.APIHeaderSection import APIHeaderSection_MakeHeader
    from OCP.TCollection import TCollection_HAsciiString as Text

    header = APIHeaderSection_MakeHeader(model)
    header.SetName(Text(file_name))
    header.SetTimeStamp(Text(FIXED_TIMESTAMP))
    header.SetAuthorValue(1, Text(""))
    header.SetOrganizationValue(1, Text(""))
    header.SetOriginatingSystem(Text(ORIGINATING_SYSTEM))
    header.SetPreprocessorVersion(Text(ORIGINATING_SYSTEM))
    header.SetAuthorisation(Text(""))
    header.SetDescriptionValue(1, Text(description))
