"""The scene checker: findings (severity, stable code, message, where) about a parsed scene.

``checker`` holds the finding type, the code table and ``check_scene``; ``layout``, ``reach``
and ``goals`` each own one group of checks. Imports ``scene``, ``geometry`` and ``planning``::

    from arena_studio.core.checks import check_scene, Finding
"""

from __future__ import annotations

from arena_studio.core.checks.checker import (
    CODES,
    SEVERITIES,
    Finding,
    check_scene,
    count_by_severity,
)

__all__ = ["CODES", "SEVERITIES", "Finding", "check_scene", "count_by_severity"]
