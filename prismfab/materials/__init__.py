"""Optical materials: dispersion formulas and the catalogue, each entry with its source.

Public API (a contract other stages code against)::

    get(name, *, catalogue_file=None) -> Material        lookup by key, name, code or alias
    catalogue(catalogue_file=None) -> tuple[Material, ...]
    search(query, *, catalogue_file=None) -> tuple[Material, ...]

Names are generic ("fused silica", "calcium fluoride", "sapphire (o)") or six-digit glass codes
("517642", also "517642 borosilicate crown"); lookup ignores case. Birefringent crystals have one
entry per ray; their bare name ("sapphire") is refused with both choices, since the index depends
on the crystal axis. A user catalogue file (syntax: header of ``data/catalogue.yaml``) extends or
overrides the shipped one. Catalogues are parsed once and cached; ``get`` is cached too.

Note: the function ``catalogue`` shadows the submodule of the same name as an attribute of this
package; reach the submodule with ``from prismfab.materials.catalogue import ...``.
"""

from __future__ import annotations

import functools
import os

from prismfab.materials.catalogue import Material, load_catalogue, normalise
from prismfab.materials.formulas import glass_code

__all__ = ["Material", "catalogue", "get", "glass_code", "search"]


def get(name: str, *, catalogue_file: str | os.PathLike[str] | None = None, path: str = "") -> Material:
    """The material a name means.

    Args:
        name: key, display name, six-digit code, "<code> <type>" or alias; case-insensitive.
        catalogue_file: a user catalogue file that extends or overrides the shipped one.
        path: the spec field the name came from, for the error message.

    Raises:
        MaterialError: unknown or ambiguous name (with a suggestion), or a bad catalogue file.
    """
    if catalogue_file:
        return load_catalogue(catalogue_file).find(name, path=path)
    return _get_shipped(name, path)


@functools.lru_cache(maxsize=256)
def _get_shipped(name: str, path: str) -> Material:
    return load_catalogue(None).find(name, path=path)


def catalogue(catalogue_file: str | os.PathLike[str] | None = None) -> tuple[Material, ...]:
    """Every material, shipped entries first (user overrides in place), user additions last.

    Raises:
        MaterialError: the user catalogue file cannot be read or has a wrong entry.
    """
    return load_catalogue(catalogue_file).materials


def search(
    query: str, *, catalogue_file: str | os.PathLike[str] | None = None
) -> tuple[Material, ...]:
    """Materials whose names, code, type, formula or source contain every word of the query.

    An exact name (as ``get`` accepts it) returns that material alone; an ambiguous name
    ("sapphire", "quartz") returns every entry it could mean. An empty query returns the whole
    catalogue. Matching ignores case.

    Args:
        query: words, e.g. "flint", "crystal", "malitson", "caf2", "517642".
        catalogue_file: a user catalogue file that extends or overrides the shipped one.
    """
    cat = load_catalogue(catalogue_file)
    norm = normalise(query)
    if norm in cat.index:
        return (cat.by_key(cat.index[norm]),)
    if norm in cat.ambiguous:
        return tuple(cat.by_key(k) for k in cat.ambiguous[norm])
    words = norm.split()
    return tuple(m for m in cat.materials if all(w in _haystack(m) for w in words))


def _haystack(material: Material) -> str:
    parts = (material.key, material.name, material.code, material.type, material.formula,
             material.source, material.citation, *material.aliases)
    return normalise(" | ".join(parts))
