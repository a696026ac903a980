"""The compiled part of the package; everything else is declared in pyproject.toml.

logbook_plaintext (native/plaintext.c) is the fast path of the ingest reader. It is
optional: without a C compiler the build skips it and the reader uses pyarrow's CSV
reader for every file (slower, same results).
"""

from setuptools import Extension, setup

setup(ext_modules=[Extension("logbook_plaintext", ["native/plaintext.c"], optional=True)])
