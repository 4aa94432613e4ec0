"""Chemistry tables and rules: preparations and what they spoil (``prep``), the correlation table
of group frequencies (``bands``), structures and SMARTS groups with RDKit (``structure``), and
isotope shifts (``isotope``). Reads the CSV tables of reflib/data; imports nothing of signal,
analysis or the library.
"""
