"""Comparing spectra: the peak vector (``encode``), search and verdict (``search``), two-spectrum
comparison (``compare``), leftover starting material (``leftover``), mixtures (``mixture``) and
the absorbance profiles and fits those two share (``profiles``).

Numerical core without I/O; may import signal and chem, never the library, CLI or server.
"""
