"""reflib: a group's own infrared reference library, and search that knows sample preparation.

The public API, imported lazily so that ``reflib --help`` starts fast::

    import reflib
    spec = reflib.read_spectrum("crude-42.jdx")
    lib = reflib.Library.open("group.sqlite")
    result = lib.search(spec, prep=["nujol"], top=5)

A library match is evidence, not proof of identity.
"""

from __future__ import annotations

from typing import Any

__version__ = "0.1.0"

_LAZY = {
    "Spectrum": "reflib.spectrum",
    "PeakList": "reflib.spectrum",
    "Metadata": "reflib.spectrum",
    "read_spectrum": "reflib.io",
    "read_all": "reflib.io",
    "ReflibError": "reflib.errors",
    "Library": "reflib.library",
    "groups": "reflib.chem.groups",
}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'reflib' has no attribute {name!r}")


__all__ = sorted(_LAZY)
