"""The laboratory: what one test gives on its own.

Sieve series (:mod:`~tamis.lab.sieves`), the sieve analysis from masses to
percent passing with its QA checks (:mod:`~tamis.lab.sieve_analysis`), the
gradation curve and its D-values (:mod:`~tamis.lab.curve`), the USCS class
(:mod:`~tamis.lab.uscs`), specification bands (:mod:`~tamis.lab.bands`) and
the reduction of a test to all of these (:mod:`~tamis.lab.reduction`).

The lab imports only the shared vocabulary at the top of the package
(:mod:`tamis.errors`, :mod:`tamis.checks`, :mod:`tamis.registry`).
"""
