"""Build the fabrication package of a spec: one folder per revision, written atomically.

Layout (``<out>/<drawing prefix>/<revision>/``)::

    <part number>_<rev>.step   .dxf   .pdf     per part: model, drawing, fabrication sheet
    <prefix>_<rev>_assembly.step               the system, prisms at their poses
    <prefix>_<rev>_system-report.pdf
    rfq.csv  rfq.json                          the request-for-quote summary
    spec.yaml  [spec.lock.*]                   the spec as built, and its solve lock if any
    revision.json                              the revision record (letter, date, hash, snapshot)
    manifest.json                              SHA-256 of every file, spec hash, version, date

Rules: an issued revision is never overwritten; a build of a spec whose hash equals the latest
revision's reuses that revision and writes nothing; a changed spec gets the next letter; the
folder is written in a staging folder beside the target under a folder lock and renamed into
place, so a failed or killed build leaves the previous revisions as they were.

The writers come in a table (``Writers``) so tests can run the whole sequence with small fake
writers; ``real_writers()`` gives the STEP, DXF and PDF writers of prismfab.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import os
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from prismfab.errors import OutputError
from prismfab.model import DocumentInfo, Part
from prismfab.package import rfq
from prismfab.package.atomic import FolderLock, Stage, inside, remove_stale_stages, safe_name
from prismfab.package.diff import changes as diff_changes
from prismfab.package.inputs import Inputs, inputs_from_file
from prismfab.package.manifest import manifest, write_zip
from prismfab.package.revisions import (
    RECORD_FILE,
    RevisionRecord,
    build_date,
    dumps,
    next_letter,
    read_records,
    revision_table,
    write_index,
)
from prismfab.package.snapshot import snapshot

__all__ = ["BuildResult", "Writers", "build", "build_package", "real_writers"]


@dataclass(frozen=True, slots=True)
class Writers:
    """The file writers a build calls, by format.

    Args:
        part_step: ``(part, path)`` writes the part's STEP model.
        assembly_step: ``(solution, path)`` writes the system assembly STEP.
        layout: ``(part, info, spec) -> sheet`` lays out the part drawing.
        dxf: ``(sheet, path)`` writes the drawing as DXF.
        fabrication_sheet: ``(part, sheet, info, path)`` writes the fabrication sheet PDF.
        system_report: ``(solution, path)`` writes the system report PDF.
    """

    part_step: Callable[[Part, Path], Any]
    assembly_step: Callable[[Any, Path], Any]
    layout: Callable[[Part, DocumentInfo, Any], Any]
    dxf: Callable[[Any, Path], Any]
    fabrication_sheet: Callable[[Part, Any, DocumentInfo, Path], Any]
    system_report: Callable[[Any, Path], Any]


def _real_part_step(part: Part, path: Path) -> Any:
    from prismfab.cad import step

    return step.part_step(part, path)


def _real_assembly_step(solution: Any, path: Path) -> Any:
    from prismfab.cad import assembly

    return assembly.assembly_step(solution, path, name=f"{solution.spec.project.drawing_prefix} "
                                  "prism system")


def _real_layout(part: Part, info: DocumentInfo, spec: Any) -> Any:
    from prismfab.drawing import layout_part

    return layout_part(part, info, template=spec.sheet.template, projection=spec.sheet.projection)


def _real_dxf(sheet: Any, path: Path) -> Any:
    from prismfab.drawing import dxf

    return dxf.save(dxf.render(sheet), path)


def _real_fabrication_sheet(part: Part, sheet: Any, info: DocumentInfo, path: Path) -> Any:
    from prismfab.sheet import fabrication_sheet

    return fabrication_sheet(part, sheet, info, path)


def _real_system_report(solution: Any, path: Path) -> Any:
    from prismfab.sheet import system_report

    return system_report(solution, path)


def real_writers() -> Writers:
    """prismfab's own writers (cadquery, ezdxf and reportlab are imported on first use)."""
    return Writers(part_step=_real_part_step, assembly_step=_real_assembly_step,
                   layout=_real_layout, dxf=_real_dxf,
                   fabrication_sheet=_real_fabrication_sheet, system_report=_real_system_report)


def _shared_solids() -> contextlib.AbstractContextManager[None]:
    """Each part's solid is built once for its STEP file and the assembly."""
    from prismfab.cad.solid import reuse_solids  # OCP itself loads only when a solid is built

    return reuse_solids()


def _default_solve(spec: Any) -> Any:
    from prismfab.pipeline import run

    return run(spec)


@dataclass(frozen=True, slots=True)
class BuildResult:
    """What a build did.

    Args:
        folder: the revision folder.
        revision: its letter.
        reused: True when the spec matched the latest revision and nothing was written.
        changes: the change list of this revision against the previous one.
        zip_path: the zip, when asked for.
        solution: the solved design (None when reused without solving).
    """

    folder: Path
    revision: str
    reused: bool
    changes: tuple[tuple[str, str], ...] = ()
    zip_path: Path | None = None
    solution: Any = field(default=None, compare=False)


def build_package(spec_path: str | os.PathLike[str], *, out_dir: str | os.PathLike[str] = "outputs",
                  make_zip: bool = False, writers: Writers | None = None,
                  solve: Callable[[Any], Any] | None = None) -> Path:
    """Build (or reuse) the package of a spec file; returns the revision folder.

    Args:
        spec_path: the YAML spec.
        out_dir: the output folder; the package goes to ``<out_dir>/<prefix>/<revision>/``.
        make_zip: also write ``<out_dir>/<prefix>/<prefix>_<revision>.zip``.
        writers: the file writers (default: ``real_writers()``).
        solve: spec -> Solution (default: ``prismfab.pipeline.run``).

    Raises:
        SpecError: the spec is wrong (nothing is written).
        SolveError: no geometry meets the spec (nothing is written).
        OutputError: the package cannot be written (the message says why and what to do).
    """
    from prismfab.spec.load import load_spec

    path = Path(spec_path)
    spec = load_spec(path)
    return build(inputs_from_file(path, spec), out_dir=Path(out_dir), make_zip=make_zip,
                 writers=writers, solve=solve).folder


def build(inputs: Inputs, *, out_dir: Path, make_zip: bool = False, writers: Writers | None = None,
          solve: Callable[[Any], Any] | None = None, today: _dt.date | None = None,
          lock_timeout_s: float = 300.0) -> BuildResult:
    """Build (or reuse) the package of prepared inputs (see ``build_package``)."""
    spec = inputs.spec
    prefix = safe_name(spec.project.drawing_prefix, what="drawing prefix")
    prefix_dir = inside(out_dir, prefix)
    digest = inputs.sha256
    latest = _latest(read_records(prefix_dir))
    if latest is not None and latest.spec_sha256 == digest:
        return _reused(prefix_dir, latest, make_zip)
    solution = (solve or _default_solve)(spec)
    record_base = snapshot(solution, extra_hash=inputs.extra_sha256)
    try:
        prefix_dir.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise OutputError(f"cannot create the output folder '{prefix_dir}': "
                          f"{err.strerror or err}; check the path given with -o") from err
    with FolderLock(prefix_dir, timeout_s=lock_timeout_s):
        remove_stale_stages(prefix_dir)
        records = read_records(prefix_dir)
        latest = _latest(records)
        if latest is not None and latest.spec_sha256 == digest:  # a concurrent build issued it
            return _reused(prefix_dir, latest, make_zip, solution)
        changes = diff_changes(latest.snapshot, record_base) if latest else ()
        if latest and not changes:
            changes = (("", "spec revised; no change to the drawn design"),)
        record = RevisionRecord(
            letter=next_letter(latest.letter if latest else None),
            date=build_date(spec.project.date, today=today), spec_sha256=digest,
            snapshot=record_base, changes=changes, approved_by=spec.project.approved_by)
        target = inside(prefix_dir, record.letter)
        with Stage(target) as stage, _shared_solids():
            try:
                _write_all(stage.path, inputs, solution, (*records, record),
                           writers or real_writers())
            except OutputError:
                raise
            except OSError as err:  # a writer's own file error: same message shape as ours
                raise OutputError(f"cannot write the package in '{prefix_dir}': "
                                  f"{err.strerror or err}; check free space and permissions"
                                  ) from err
            folder = stage.publish()
        write_index(prefix_dir, read_records(prefix_dir))
    zip_path = _zip(prefix_dir, folder, prefix, record.letter) if make_zip else None
    return BuildResult(folder=folder, revision=record.letter, reused=False, changes=changes,
                       zip_path=zip_path, solution=solution)


def _latest(records: tuple[RevisionRecord, ...]) -> RevisionRecord | None:
    return records[-1] if records else None


def _zip(prefix_dir: Path, folder: Path, prefix: str, letter: str) -> Path:
    target = prefix_dir / f"{prefix}_{letter}.zip"
    if not target.exists():
        write_zip(folder, target, root=f"{prefix}_{letter}")
    return target


def _reused(prefix_dir: Path, latest: RevisionRecord, make_zip: bool, solution: Any = None
            ) -> BuildResult:
    folder = prefix_dir / latest.letter
    zip_path = _zip(prefix_dir, folder, prefix_dir.name, latest.letter) if make_zip else None
    return BuildResult(folder=folder, revision=latest.letter, reused=True, changes=latest.changes,
                       zip_path=zip_path, solution=solution)


def document_info(part: Part, spec: Any, records: tuple[RevisionRecord, ...]) -> DocumentInfo:
    """Title-block data of a part drawing from the spec's project and the revision records."""
    p, rec = spec.project, records[-1]
    return DocumentInfo(
        number=part.number, title=part.title, revision=rec.letter, date=rec.date,
        company=p.company, drawn_by=p.drawn_by, checked_by=p.checked_by,
        approved_by=p.approved_by, document_type="Fabrication drawing", sheet="1/2",
        revisions=revision_table(records, part.prism.name), scenario=p.title)


def _write_all(folder: Path, inputs: Inputs, solution: Any, records: tuple[RevisionRecord, ...],
               writers: Writers) -> None:
    spec, rec = inputs.spec, records[-1]
    prefix = safe_name(spec.project.drawing_prefix, what="drawing prefix")
    documents: dict[str, list[str]] = {}
    for part in solution.parts:
        base = safe_name(f"{part.number}_{rec.letter}", what="part number")
        info = document_info(part, spec, records)
        writers.part_step(part, inside(folder, f"{base}.step"))
        sheet = writers.layout(part, info, spec)
        writers.dxf(sheet, inside(folder, f"{base}.dxf"))
        writers.fabrication_sheet(part, sheet, info, inside(folder, f"{base}.pdf"))
        documents[part.number] = [f"{base}.pdf", f"{base}.dxf", f"{base}.step"]
    common = [f"{prefix}_{rec.letter}_assembly.step", f"{prefix}_{rec.letter}_system-report.pdf"]
    writers.assembly_step(solution, inside(folder, common[0]))
    writers.system_report(solution, inside(folder, common[1]))
    for number in documents:
        documents[number] += common
    rows = rfq.rows(solution.parts, revision=rec.letter, documents=documents)
    _text(folder, "rfq.csv", rfq.rfq_csv(rows))
    _text(folder, "rfq.json", rfq.rfq_json(rows, project=spec.project, revision=rec.letter,
                                           date=rec.date, common_documents=common))
    _text(folder, "spec.yaml", inputs.spec_text)
    if inputs.lock_text:
        _text(folder, "spec" + inputs.lock_name[inputs.lock_name.rindex(".lock"):], inputs.lock_text)
    _text(folder, RECORD_FILE, dumps(rec.to_json()))
    from prismfab import __version__

    manifest(folder, spec_sha256=rec.spec_sha256, version=__version__, prefix=prefix,
             revision=rec.letter, date=rec.date, extra={"notes": dict(inputs.notes)})


def _text(folder: Path, name: str, text: str) -> None:
    try:
        inside(folder, name).write_text(text, encoding="utf-8", newline="\n")
    except OSError as err:
        raise OutputError(f"cannot write '{folder / name}': {err.strerror or err}") from err
