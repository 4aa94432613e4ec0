"""Signal processing of one spectrum: baseline, noise, peak picking (``peaks``).

Arrays in, arrays out; no I/O, and nothing of the library or the analysis. ``peakfind``
(``find_peaks``, ``peak_widths``), ``filters1d`` (1-D minimum, maximum, mean and Gaussian filters)
and ``assignment`` (``linear_sum_assignment``) are numpy versions of the few SciPy functions the
search path needs. They exist so that ``reflib search`` starts without importing scipy.signal,
scipy.ndimage or scipy.optimize (whose package imports alone cost most of a short search), and
each is tested against SciPy for identical results (tests/signal/).
"""
