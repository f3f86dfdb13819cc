"""margincheck: worst-case derating margins of power-switch cells, from one YAML design file.

The command line is :mod:`margincheck.cli`; :func:`margincheck.checking.check_file` runs a check from Python.
"""

__version__ = "0.1.0"
