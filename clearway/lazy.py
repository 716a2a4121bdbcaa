"""Package attributes imported on first use (PEP 562), so that a command pays only for what it
runs: `clearway --help` needs no numpy, `layers` no roadmap stage.

Each package's ``__init__.py`` names its public API once, as public name -> defining module:

    __getattr__, __dir__, __all__ = lazy_exports(__name__, {"read_floorplan": "convert", ...})

``from clearway.converter import read_floorplan`` then imports ``clearway.converter.convert``
(and whatever it imports) at that moment, and the value is kept in the package's namespace.
"""

from __future__ import annotations

import importlib
import sys


def lazy_exports(package: str, sources: dict[str, str]):
    """Return ``(__getattr__, __dir__, __all__)`` for `package`.

    Parameters
    ----------
    package : str
        The package's ``__name__``.
    sources : dict of str to str
        Public name -> name of the submodule (relative to `package`) that defines it.
    """
    def __getattr__(name: str):
        try:
            module = sources[name]
        except KeyError:
            raise AttributeError(f"module {package!r} has no attribute {name!r}") from None
        value = getattr(importlib.import_module(f"{package}.{module}"), name)
        setattr(sys.modules[package], name, value)
        return value

    def __dir__() -> list[str]:
        return sorted(set(vars(sys.modules[package])) | set(sources))

    return __getattr__, __dir__, list(sources)
