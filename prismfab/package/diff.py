"""What changed between two solved designs, in the words a drawing's revision table uses.

``changes(old, new)`` compares two snapshots (``prismfab.package.snapshot``) and returns
(subject, text) pairs: subject is a prism name for part changes ("P1", "material 517642 →
785257") and "" for the spec-level changes ("magnification 3.00 → 3.20"). Angles are written as
the drawing writes them (degrees, minutes and, for tolerances under 10′, seconds), so a change
smaller than the drawing's resolution is not reported; lengths with the decimals of their
tolerance. Order: spec-level changes first, then parts in beam order, each part's items in a
fixed order (material, section, faces, tolerances).
"""

from __future__ import annotations

from typing import Any

from prismfab.drawing.fmt import angle_tolerance_text, dms, number_text, tol_decimals

__all__ = ["Change", "changes", "format_changes"]

Change = tuple[str, str]
ARROW = "→"

_SPEC_WORDS: dict[str, tuple[str, str, int]] = {
    # dotted spec path: (words, unit, minimum decimals)
    "design.magnification": ("magnification", "", 2),
    "design.exit_tilt_deg": ("exit-face tilt", "°", 1),
    "design.separation_mm": ("prism separation", "mm", 1),
    "design.tuning_range": ("magnification tuning range", "", 2),
    "design.apex_deg": ("apex angle", "°", 1),
    "design.deviation_deg": ("deviation", "°", 1),
    "requirements.pointing_mrad": ("pointing requirement", "mrad", 1),
    "requirements.magnification_pct": ("magnification requirement", "%", 1),
    "requirements.offset_mm": ("offset requirement", "mm", 1),
    "requirements.yield_target": ("yield target", "", 2),
    "fabrication.bevel_mm": ("bevel", "mm", 1),
    "fabrication.clear_aperture_margin": ("clear-aperture margin", "", 1),
}
_SHOWN_ON_PARTS = frozenset({
    "design.material", "design.materials", "fabrication.angle_tolerance_arcsec",
    "fabrication.pyramidal_tolerance_arcsec", "fabrication.bevel_mm", "fabrication.grade",
    "project.quantity", "project.part_titles",
})
"""Spec fields whose change the part lines already state (left out when a part changed)."""
_UNITS = (("_nm", "nm"), ("_mm", "mm"), ("_deg", "°"), ("_mrad", "mrad"), ("_pct", "%"),
          ("_arcsec", "″"))


def changes(old: dict[str, Any], new: dict[str, Any]) -> tuple[Change, ...]:
    """The change list from snapshot ``old`` to snapshot ``new`` (empty when nothing shows)."""
    old_parts, new_parts = old.get("parts", {}), new.get("parts", {})
    out: list[Change] = []
    for name in new_parts:
        if name not in old_parts:
            out.append((name, f"added ({new_parts[name]['number']})"))
            continue
        out += [(name, t) for t in _part_changes(old_parts[name], new_parts[name])]
    out += [(name, "removed") for name in old_parts if name not in new_parts]
    skip = _SHOWN_ON_PARTS if out else frozenset()
    system = [("", t) for t in _spec_changes(old.get("spec", {}), new.get("spec", {}), skip)]
    if old.get("inputs_sha256", "") != new.get("inputs_sha256", ""):
        system.append(("", "user materials file or solve lock changed"))
    return tuple(system + out)


def format_changes(items: tuple[Change, ...]) -> list[str]:
    """One line per change: "P1 material 517642 → 785257"."""
    return [f"{s} {t}" if s else t for s, t in items]


# ----------------------------------------------------------------------------- spec level


def _spec_changes(old: dict[str, Any], new: dict[str, Any], skip: frozenset[str]) -> list[str]:
    out = []
    for path in sorted(set(old) | set(new), key=_spec_order):
        a, b = old.get(path), new.get(path)
        if a != b and path not in skip:
            out.append(_spec_change(path, a, b))
    return out


def _spec_order(path: str) -> tuple[int, str]:
    sections = ("family", "design", "beam", "requirements", "fabrication", "project", "sheet")
    head = path.split(".")[0]
    return (sections.index(head) if head in sections else len(sections), path)


def _spec_change(path: str, a: Any, b: Any) -> str:
    words, unit, decimals = _SPEC_WORDS.get(path, (_words(path), _unit(path), 0))
    return f"{words} {_value(a, decimals)} {ARROW} {_value(b, decimals)}{_unit_text(unit)}"


def _words(path: str) -> str:
    parts = path.split(".")
    if parts[0] in ("design", "project") and len(parts) > 1:
        parts = parts[1:]
    leaf = parts[-1]
    for suffix, _ in _UNITS:
        if leaf.endswith(suffix):
            leaf = leaf[: -len(suffix)]
    return " ".join([*parts[:-1], leaf]).replace("_", " ")


def _unit(path: str) -> str:
    return next((u for s, u in _UNITS if path.endswith(s)), "")


def _unit_text(unit: str) -> str:
    return "" if not unit else unit if unit in ("°", "″", "%") else f" {unit}"


def _decimals(value: float) -> int:
    text = f"{value:.6f}".rstrip("0")
    return len(text.split(".")[1]) if "." in text else 0


def _value(v: Any, decimals: int) -> str:
    if v is None:
        return "none (solver's choice)"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (int, float)):
        return number_text(float(v), max(decimals, _decimals(float(v))))
    if isinstance(v, list):
        return "[" + ", ".join(_value(x, decimals) for x in v) + "]"
    return f"'{v}'" if v == "" else str(v)


# ----------------------------------------------------------------------------- part level


def _part_changes(a: dict[str, Any], b: dict[str, Any]) -> list[str]:
    out = []
    for key, words in (("title", "title"), ("quantity", "quantity")):
        if a[key] != b[key]:
            out.append(f"{words} {a[key]} {ARROW} {b[key]}")
    ma, mb = a["material"], b["material"]
    if (ma["code"], ma["name"]) != (mb["code"], mb["name"]):
        use_code = bool(ma["code"] and mb["code"])
        out.append(f"material {ma['code'] if use_code else ma['name']} {ARROW} "
                   f"{mb['code'] if use_code else mb['name']}")
    out += _angle_changes(a, b)
    out += _length_changes(a, b)
    out += _face_changes(a, b)
    out += _tolerance_changes(a["tolerances"], b["tolerances"])
    return out


def _angle_changes(a: dict[str, Any], b: dict[str, Any]) -> list[str]:
    if len(a["angles"]) != len(b["angles"]):
        return [f"section {len(a['angles'])} {ARROW} {len(b['angles'])} sides"]
    ta, tb = a["tolerances"]["angle_arcsec"], b["tolerances"]["angle_arcsec"]
    out = []
    for x, y in zip(a["angles"], b["angles"], strict=True):
        old, new = _angle(x["value_deg"], ta), _angle(y["value_deg"], tb)
        if old != new:
            out.append(f"angle {y['faces']} {old} {ARROW} {new}")
    return out


def _angle(value_deg: float, tol_arcsec: float) -> str:
    return dms(value_deg, resolution_arcsec=1 if tol_arcsec < 600 else 60)


def _length(value_mm: float, tol_mm: float) -> str:
    return number_text(value_mm, tol_decimals(tol_mm))


def _length_changes(a: dict[str, Any], b: dict[str, Any]) -> list[str]:
    ta, tb = a["tolerances"], b["tolerances"]
    out = []
    old, new = _length(a["height_mm"], ta["height_mm"]), _length(b["height_mm"], tb["height_mm"])
    if old != new:
        out.append(f"height {old} {ARROW} {new} mm")
    if a["bevel_mm"] != b["bevel_mm"]:
        out.append(f"bevel {a['bevel_mm']:g} {ARROW} {b['bevel_mm']:g} mm")
    for label, fb in b["faces"].items():
        fa = a["faces"].get(label)
        if fa is None:
            continue
        old, new = _length(fa["length_mm"], ta["length_mm"]), _length(fb["length_mm"], tb["length_mm"])
        if old != new:
            out.append(f"face {label} length {old} {ARROW} {new} mm")
    return out


def _aperture(ca: list[float] | None) -> str:
    return "none" if not ca else f"{number_text(ca[0], 1)} × {number_text(ca[1], 1)}"


def _face_changes(a: dict[str, Any], b: dict[str, Any]) -> list[str]:
    out = []
    for label, fb in b["faces"].items():
        fa = a["faces"].get(label)
        if fa is None:
            out.append(f"face {label} added ({fb['role']})")
            continue
        if fa["role"] != fb["role"]:
            out.append(f"face {label} role {fa['role']} {ARROW} {fb['role']}")
        ca, cb = _aperture(fa["clear_aperture_mm"]), _aperture(fb["clear_aperture_mm"])
        if ca != cb:
            out.append(f"face {label} clear aperture {ca} {ARROW} {cb} mm")
        for key, words in (("surface_form", "surface form"),
                           ("surface_imperfections", "surface imperfections"),
                           ("coating", "coating")):
            if fa[key] != fb[key]:
                out.append(f"face {label} {words} {fa[key] or 'none'} {ARROW} {fb[key] or 'none'}")
    return out


def _tolerance_changes(a: dict[str, Any], b: dict[str, Any]) -> list[str]:
    out = []
    old, new = angle_tolerance_text(a["angle_arcsec"]), angle_tolerance_text(b["angle_arcsec"])
    if old != new:
        out.append(f"angle tolerance {old} {ARROW} {new}")
    old = angle_tolerance_text(a["pyramidal_arcsec"]).lstrip("±")
    new = angle_tolerance_text(b["pyramidal_arcsec"]).lstrip("±")
    if old != new:
        out.append(f"pyramidal error ≤ {old} {ARROW} ≤ {new}")
    for key, words in (("length_mm", "length tolerance"), ("height_mm", "height tolerance")):
        if a[key] != b[key]:
            out.append(f"{words} ±{a[key]:g} {ARROW} ±{b[key]:g} mm")
    if a["nd"] != b["nd"]:
        out.append(f"nd tolerance ±{a['nd']:g} {ARROW} ±{b['nd']:g}")
    if a["vd_pct"] != b["vd_pct"]:
        out.append(f"νd tolerance ±{a['vd_pct']:g} % {ARROW} ±{b['vd_pct']:g} %")
    if a["grade"] != b["grade"]:
        out.append(f"tolerance grade {a['grade']} {ARROW} {b['grade']}")
    return out
