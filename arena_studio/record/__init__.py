"""Record episodes from training code: wrappers for PettingZoo and Gymnasium environments.

::

    from arena_studio.record import RecordParallelEnv, RecordEnv

Both need the optional extra: ``pip install 'arena-studio[record]'``. The wrappers return
exactly what the wrapped environment returns and write each (chosen) episode to a tape
through :class:`arena_studio.core.tape.TapeWriter`. Qt-free; imports only ``core``.
"""

from __future__ import annotations

from typing import Any

from arena_studio.record.session import RecordingSession, tape_path
from arena_studio.record.sources import RecordError

_LAZY = {"RecordParallelEnv": "parallel", "RecordEnv": "gym"}
_NEEDS = {"parallel": "pettingzoo", "gym": "gymnasium"}


def __getattr__(name: str) -> Any:
    """The wrappers load on first use, so ``arena_studio.record`` imports without extras."""
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'arena_studio.record' has no attribute {name!r}")
    import importlib

    try:
        loaded = importlib.import_module(f"{__name__}.{module}")
    except ModuleNotFoundError as exc:
        if exc.name not in (_NEEDS[module], "gymnasium"):
            raise
        raise RecordError(f"{name} needs {exc.name}: pip install 'arena-studio[record]'") from None
    return getattr(loaded, name)


__all__ = ["RecordEnv", "RecordError", "RecordParallelEnv", "RecordingSession", "tape_path"]
