"""tamis: field checks of filter and drain aggregates.

Masses retained on a stack of sieves become a gradation curve, D-values, a USCS
class and verdicts against a specification band and published filter criteria.
Every verdict is a screening check: the project specification, local codes and
the engineer of record govern.

The package uses the Python standard library only, so the same code runs in
CPython (office, command line, tests) and in the browser through Pyodide.
"""

__version__ = "0.1.0"

SCREENING_NOTICE = (
    "Screening check only. The project specification, local codes and the "
    "engineer of record govern acceptance of filter and drain materials."
)

__all__ = ["__version__", "SCREENING_NOTICE"]
