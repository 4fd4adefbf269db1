"""arena_studio: a workbench for cooperative multi-robot landmark tasks.

Layers point down only: ``app`` (Qt GUI) -> ``render`` (drawing) -> ``core`` (Qt-free model,
geometry, goals, tapes, metrics). A simulator imports ``arena_studio.core`` and nothing else.
"""

__version__ = "0.1.0"
