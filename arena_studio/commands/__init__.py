"""Batch commands of ``arena-studio``. Each module has HELP, add_arguments(parser), run(args).

Add a command by writing its module here and listing its name in COMMANDS.
"""

from __future__ import annotations

import importlib
from types import ModuleType

COMMANDS: tuple[str, ...] = (
    "check",
    "goals",
    "export",
    "rollout",
    "import",
    "stats",
    "render",
    "export-tape",
)


def load_command(name: str) -> ModuleType:
    module_name = "import_" if name == "import" else name.replace("-", "_")
    return importlib.import_module(f"{__name__}.{module_name}")
