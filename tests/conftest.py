"""Load the package before any test module imports numpy, so that its BLAS thread
setting (see supplydesign/__init__.py) holds for the tests as for the command line."""

import supplydesign  # noqa: F401
