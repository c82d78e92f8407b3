"""The compiled lane of the tracer: one face event of a whole group in one pass per ray.

Internal module. ``_lanec.c`` is built at install time when a C compiler is present (see
setup.py) and loaded here with ctypes; it repeats the numpy lane's arithmetic operation by
operation, so a ray gets the same bits in either lane (the test suite checks this). Without the
library, or with ``PRISMFAB_NUMPY_ONLY=1`` in the environment, ``available()`` is False and the
tracer runs numpy only.
"""

from __future__ import annotations

import ctypes
import importlib.machinery
import os
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

F64 = NDArray[np.float64]

FLAG_DONE, FLAG_UNVERIFIED, FLAG_TIR = 0, 1, 2
VERSION = 3
"""The ``LANE_VERSION`` of ``_lanec.c`` these bindings are written for."""

def _load() -> ctypes.CDLL | None:
    if os.environ.get("PRISMFAB_NUMPY_ONLY"):
        return None
    here = Path(__file__).resolve().parent
    for suffix in importlib.machinery.EXTENSION_SUFFIXES:
        path = here / f"_lanec{suffix}"
        if path.is_file():
            try:
                lib = ctypes.CDLL(str(path))
                lib.prismfab_lane_version.restype = ctypes.c_int
                if lib.prismfab_lane_version() != VERSION:
                    return None  # a stale build: `pip install -e .` rebuilds it
            except (OSError, AttributeError):
                return None
            vp, n_t = ctypes.c_void_p, ctypes.c_ssize_t
            lib.prismfab_lane_refract.restype = n_t
            lib.prismfab_lane_refract.argtypes = [n_t, ctypes.c_int, vp, vp, vp, n_t, vp, n_t, vp, n_t] + \
                [vp] * 5 + [vp, n_t, vp, vp, vp, vp, vp]
            lib.prismfab_lane_start.restype = ctypes.c_int
            lib.prismfab_lane_start.argtypes = [n_t, vp, vp, vp, vp, n_t, vp, n_t, vp, n_t, vp, vp]
            lib.prismfab_lane_box.restype = ctypes.c_int
            lib.prismfab_lane_box.argtypes = [n_t, vp, n_t, vp, n_t, vp]
            lib.prismfab_lane_finish.restype = None
            lib.prismfab_lane_finish.argtypes = [n_t, vp, n_t, vp, n_t, vp, n_t, vp, vp, vp, vp, n_t, vp, n_t,
                                                 vp, vp, vp, n_t]
            return lib
    return None


_LIB = _load()
enabled = _LIB is not None
"""Whether the tracer uses the compiled lane (tests switch it off to check the numpy lane)."""


def available() -> bool:
    """True when the compiled lane is loaded and enabled."""
    return enabled and _LIB is not None


def row_ok(x: NDArray[np.generic], writeable: bool = False) -> bool:
    """A float64 row the lane can take: contiguous, and writeable when it is written."""
    return bool(x.dtype == np.float64 and x.ndim == 1 and x.strides[0] == 8 and (x.flags.writeable or not writeable))


def block_ok(x: NDArray[np.generic], writeable: bool = False) -> bool:
    """Three float64 rows (3, n) with contiguous rows, writeable when they are written."""
    return bool(x.dtype == np.float64 and x.ndim == 2 and x.shape[0] == 3 and x.strides[1] == 8
                and x.strides[0] % 8 == 0 and (x.flags.writeable or not writeable))


def _stride(x: NDArray[np.generic]) -> int:
    return x.strides[0] // x.itemsize


def refract(face: F64, optics: F64, o: F64, d: F64, u: F64, jones: list[tuple[F64, F64]], opl: F64,
            hit: F64, cosi: F64, flag: NDArray[np.uint8],
            rec: tuple[NDArray[np.int16], NDArray[np.int16], NDArray[np.int8]]) -> int:
    """Run the lane on n rays; see ``_lanec.c`` for the layout of ``face`` and ``optics``.

    ``o`` (3, n) is read; ``d``, ``u`` (3, n), the Jones rows and ``opl`` are updated in place
    for the rays that are done and left as they were for flagged rays (not verified, or totally
    reflected); ``hit`` (3, n), ``cosi``, ``flag`` and the record rows ``rec`` (prism, face,
    kind) are written for every ray. Returns the number of flagged rays.
    """
    assert _LIB is not None
    (a0, b0), (a1, b1) = jones[0], jones[-1]
    return int(_LIB.prismfab_lane_refract(
        o.shape[1], len(jones), face.ctypes.data, optics.ctypes.data, o.ctypes.data, _stride(o),
        d.ctypes.data, _stride(d), u.ctypes.data, _stride(u), a0.ctypes.data, b0.ctypes.data,
        a1.ctypes.data, b1.ctypes.data, opl.ctypes.data, hit.ctypes.data, _stride(hit), cosi.ctypes.data,
        flag.ctypes.data, rec[0].ctypes.data, rec[1].ctypes.data, rec[2].ctypes.data))


def start(origins: F64, directions: F64, fields: NDArray[np.complex128], o: F64, d: F64, u: F64,
          a: F64, b: F64) -> bool:
    """Chunk start with real fields (see ``_lanec.c``); False: a field has a phase or is zero
    (``o`` and ``d`` are filled all the same, ``u``, ``a``, ``b`` are not valid)."""
    assert _LIB is not None
    return _LIB.prismfab_lane_start(
        origins.shape[0], origins.ctypes.data, directions.ctypes.data, fields.ctypes.data,
        o.ctypes.data, _stride(o), d.ctypes.data, _stride(d), u.ctypes.data, _stride(u),
        a.ctypes.data, b.ctypes.data) == 0


def finish(o: F64, d: F64, u: F64, a: F64, b: F64, opl: F64, out_o: F64, out_d: F64, out_opl: F64,
           out_power: F64, out_fields: NDArray[np.complex128]) -> None:
    """Final points, directions, path, power and field of rays with one real Jones pair."""
    assert _LIB is not None
    _LIB.prismfab_lane_finish(
        o.shape[1], o.ctypes.data, _stride(o), d.ctypes.data, _stride(d), u.ctypes.data, _stride(u),
        a.ctypes.data, b.ctypes.data, opl.ctypes.data, out_o.ctypes.data, _stride(out_o),
        out_d.ctypes.data, _stride(out_d), out_opl.ctypes.data, out_power.ctypes.data,
        out_fields.ctypes.data, _stride(out_fields))


def box(o: F64, d: F64) -> tuple[F64, F64, F64, F64] | None:
    """Component ranges (o_lo, o_hi, d_lo, d_hi) of rows (3, n) in one pass; None if a value
    is not a number."""
    assert _LIB is not None
    out = np.empty(12)
    if _LIB.prismfab_lane_box(o.shape[1], o.ctypes.data, _stride(o), d.ctypes.data, _stride(d), out.ctypes.data):
        return None
    return out[0:3], out[3:6], out[6:9], out[9:12]
