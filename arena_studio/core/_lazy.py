"""Lazy package facades: names resolve to their home module on first use.

A facade lists where each public name lives; nothing is imported until a name is used, so
``import arena_studio.core`` stays cheap for the command line and for simulators that need
only part of the core.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from typing import Any


def attach(
    package: str, homes: dict[str, str]
) -> tuple[Callable[[str], Any], Callable[[], list[str]], list[str]]:
    """``__getattr__``, ``__dir__`` and ``__all__`` for a package whose names live elsewhere.

    ``homes`` maps each public name to the module (absolute) that defines it.
    """

    def __getattr__(name: str) -> Any:
        home = homes.get(name)
        if home is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(home), name)
        globals_of_package = importlib.import_module(package).__dict__
        globals_of_package[name] = value  # later lookups skip __getattr__
        return value

    def __dir__() -> list[str]:
        return sorted(homes)

    return __getattr__, __dir__, sorted(homes)
