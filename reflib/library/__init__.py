"""The library: one SQLite file of compounds, spectra, peaks and vectors, and the public
:class:`Library` every command calls.

``store`` (schema, transactions, migrations), ``index`` (the memory-mapped vector cache beside
the file), ``entries`` (what one add computes before it writes), ``bulk`` (many adds),
``importer`` / ``exporter`` (manifests and folders), ``health`` (``reflib check``), ``lookup``
(analyses run with library compounds) and ``core`` (:class:`Library`). May import io, signal,
chem and analysis; never the CLI, the report or the server.
"""

from reflib.library.core import Library

__all__ = ["Library"]
