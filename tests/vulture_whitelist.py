"""Names the dead-code check (tests/test_dead_code.py) cannot see being used.

vulture reads this file as code: every name below counts as used.  Each line says who
uses it.  Add a line here only for a name that is used from outside the package's own
code; delete dead code instead of listing it.
"""
# ruff: noqa
# flake8: noqa
_ = None

# typer: the root callback is registered by @app.callback(), and --version is handled by
# its eager callback (the parameter itself is never read).
_root  # icecolumn/cli.py
version  # icecolumn/cli.py, _root(version=...)

# Configuration fields are read by reflection (dataclasses.fields: TOML, validation); the
# durations are used through their parsed companions <key>_seconds.
_.flooding_timescale
_.snow_ice_drainage_timescale
_.max_step
_.initial_step

# Public API for users and checked against published values in the tests (the package
# itself calls the *_scalar versions inside the compiled kernel).
_.rayleigh_number  # drainage.py, tests/test_drainage.py
_.invert_enthalpy  # phase.py, tests/test_phase.py and tests/test_drainage.py
_.brine_volume_fraction  # phase.py, tests/test_phase.py
_.pure_ice_conductivity  # properties.py, tests/test_properties.py
_.brine_conductivity  # properties.py, tests/test_properties.py
_.longwave_down  # surface.py, tests/test_surface.py
_.saturation_vapour_pressure  # surface.py, tests/test_surface.py
_.transfer_coefficient  # surface.py, tests/test_surface.py
_.covariance  # calibrate.CalibrationResult, tests/test_calibrate.py

# Python's warnings module calls warnings.showwarning to print each warning.
_.showwarning  # icecolumn/cli_common.py, warnings_as_lines

# numba's cache machinery calls the locator's stamp and reads the dispatcher's cache object.
_.get_source_stamp  # icecolumn/_jit.py, called by numba.core.caching
_._cache  # icecolumn/_jit.py, numba.core.dispatcher.Dispatcher._cache

# PEP 562 module hooks of icecolumn/__init__.py, called by Python on attribute access and dir().
__getattr__  # icecolumn/__init__.py
__dir__  # icecolumn/__init__.py

# xarray reads the slots that icecolumn/output.py _direct_variable sets (Variable.encoding).
_._encoding  # icecolumn/output.py
