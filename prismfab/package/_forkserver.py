"""The batch's fork server: warm the shared caches before workers fork, and leave quickly.

Imported only as the last entry of the fork server's preload list (``prismfab.package.batch``),
after the libraries. Importing it

* imports every design family module (the dispatcher imports them on first use) and warms the
  caches every item reads: the shipped material catalogue and, when the writers were preloaded,
  the sheet fonts and templates. Workers forked afterwards share all of it instead of each one
  paying for it on its first item. A failure here is ignored: the item that needs the thing
  reports it;
* registers an exit handler that leaves through ``os._exit``: the server holds the CAD kernel,
  whose static destructors take about half a second at interpreter exit, and has nothing to
  flush once its parent is gone. The workers forked from it end through ``os._exit`` of their
  own and never run exit handlers.

Import this module nowhere else.
"""

from __future__ import annotations

import atexit
import contextlib
import importlib
import os
import pkgutil
import sys


def _warm() -> None:
    with contextlib.suppress(Exception):
        import prismfab.design

        for info in pkgutil.iter_modules(prismfab.design.__path__):
            with contextlib.suppress(Exception):
                importlib.import_module(f"prismfab.design.{info.name}")
    with contextlib.suppress(Exception):
        from prismfab.materials import catalogue

        catalogue()
    if "prismfab.drawing.layout" in sys.modules:
        with contextlib.suppress(Exception):
            from prismfab.drawing.fonts import register
            from prismfab.drawing.template import load_template

            register()
            for name in ("a3-landscape", "a4-landscape"):
                load_template(name)


def _leave() -> None:
    sys.stdout.flush()
    sys.stderr.flush()
    os._exit(0)


_warm()
atexit.register(_leave)
