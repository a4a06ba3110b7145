"""PEP 517 build backend: setuptools' own, run with this folder on the path, so that the
``build_py`` command of icecolumn_build.py (named in pyproject.toml) can be imported."""
from setuptools.build_meta import *  # noqa: F401,F403
