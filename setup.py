"""Build hook for the optional compiled lane of the tracer (prismfab/optics/_lanec.c).

Everything else is in pyproject.toml. The extension is optional: without a C compiler the
install still succeeds and the tracer runs its numpy lane (same results, bit for bit).
"""

import os

from setuptools import Extension, setup

FLAGS = ["-O3", "-ffp-contract=off", "-fno-fast-math", "-fno-math-errno", "-fno-trapping-math"] if os.name == "posix" else []

setup(ext_modules=[Extension("prismfab.optics._lanec", ["prismfab/optics/_lanec.c"],
                             extra_compile_args=FLAGS, optional=True)])
