"""Where the recorded values come from: a callable on the environment, or a key of ``infos``.

Environments name their agents freely; a tape stores them in the scene's agent order. The
helpers here turn what an environment gives (an ``(A, 3)`` array in scene order, a mapping by
agent name, or per-agent ``infos`` entries) into arrays in scene order, and say plainly what
does not fit (which value, which agent, which shape).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np

from arena_studio.core.errors import ArenaError
from arena_studio.core.scene import Scene

#: a value source: ``fn(env)`` or the name of a key in ``infos``
Source = Callable[[Any], Any] | str


class RecordError(ArenaError):
    """The environment gave something that cannot be recorded (named in the message)."""


def match_agents(
    scene: Scene, names: Sequence[str], mapping: Mapping[str, str] | None, what: str
) -> list[str]:
    """Environment agent names in the scene's agent order.

    ``mapping`` maps environment names to scene agent ids; without it the names must equal
    the scene's ids. Every scene agent needs exactly one environment agent.
    """
    ids = [a.id for a in scene.agents]
    to_scene = dict(mapping) if mapping is not None else {n: n for n in names}
    unknown = [n for n in names if n not in to_scene]
    if unknown:
        raise RecordError(f"{what}: agents {unknown} have no scene agent in the mapping")
    wrong = sorted({to_scene[n] for n in names} - set(ids))
    if wrong:
        raise RecordError(
            f"{what}: {wrong} are not agents of scene '{scene.name}' (it has {ids}); "
            "pass agent_ids={env_name: scene_id, ...}"
        )
    by_scene = {to_scene[n]: n for n in names}
    if len(by_scene) != len(names):
        raise RecordError(f"{what}: two environment agents map to one scene agent")
    missing = [i for i in ids if i not in by_scene]
    if missing:
        raise RecordError(
            f"{what}: scene agents {missing} have no environment agent "
            f"(the environment has {list(names)})"
        )
    return [by_scene[i] for i in ids]


def per_agent(
    value: Any, names: Sequence[str], width: int, what: str, missing: np.ndarray
) -> np.ndarray:
    """``(A, width)`` floats in scene order from an array or a mapping by agent name.

    Agents a mapping leaves out (finished ones) take their row of ``missing``.
    """
    a = len(names)
    out = np.array(missing, dtype=np.float64, copy=True).reshape(a, width)
    if isinstance(value, Mapping):
        for k, name in enumerate(names):
            if name in value and value[name] is not None:
                out[k] = _row(value[name], width, f"{what}[{name!r}]")
        return out
    try:
        arr = np.array(value, dtype=np.float64)  # a copy: the environment may reuse its buffer
    except (TypeError, ValueError):
        raise RecordError(f"{what}: expected numbers, got {type(value).__name__}") from None
    if arr.size != a * width:
        shape = (a, width) if width > 1 else (a,)
        raise RecordError(f"{what}: expected shape {shape}, got {arr.shape}")
    return arr.reshape(a, width)


def _row(value: Any, width: int, what: str) -> np.ndarray:
    try:
        arr = np.array(value, dtype=np.float64).reshape(-1)
    except (TypeError, ValueError):
        raise RecordError(f"{what}: expected numbers, got {type(value).__name__}") from None
    if arr.size != width:
        raise RecordError(f"{what}: expected {width} number(s), got {arr.size}")
    return arr


def from_infos(
    infos: Mapping[str, Any] | None, key: str, names: Sequence[str], per_agent_infos: bool
) -> Any:
    """What ``infos`` holds under ``key``: a mapping by agent name for per-agent infos
    (PettingZoo), or the value itself (Gymnasium); None when absent."""
    if not infos:
        return None
    if per_agent_infos:
        found = {
            n: infos[n][key] for n in names if isinstance(infos.get(n), Mapping) and key in infos[n]
        }
        return found or None
    return infos.get(key)


def resolve(
    source: Source | None,
    env: Any,
    infos: Mapping[str, Any] | None,
    names: Sequence[str],
    per_agent_infos: bool,
) -> Any:
    """Call the source on ``env``, or look its key up in ``infos``."""
    if source is None:
        return None
    if isinstance(source, str):
        return from_infos(infos, source, names, per_agent_infos)
    return source(env)


def goal_vector(value: Any, scene: Scene, what: str) -> np.ndarray | None:
    """A 0/1 vector over the scene's landmarks from a vector or a list of landmark ids."""
    if value is None:
        return None
    if isinstance(value, str):
        value = [value]
    items = list(np.asarray(value).reshape(-1)) if not isinstance(value, list | tuple) else value
    if items and all(isinstance(v, str) for v in items):
        vec = np.zeros(len(scene.landmarks), dtype=np.uint8)
        for lid in items:
            try:
                vec[scene.landmark_index(lid)] = 1
            except KeyError:
                raise RecordError(f"{what}: {lid!r} is not a landmark of the scene") from None
        return vec
    arr = np.asarray(value)
    if arr.shape != (len(scene.landmarks),) or not np.isin(arr, (0, 1)).all():
        raise RecordError(
            f"{what}: expected a 0/1 vector of {len(scene.landmarks)} landmarks "
            "or a list of landmark ids"
        )
    return arr.astype(np.uint8)


def pursued_vectors(
    value: Any, scene: Scene, names: Sequence[str], what: str
) -> list[np.ndarray | None] | None:
    """Each agent's pursued goal in scene order, from a list (scene order) or a mapping."""
    if value is None:
        return None
    if isinstance(value, Mapping):
        return [goal_vector(value.get(n), scene, f"{what}[{n!r}]") for n in names]
    items = list(value)
    if len(items) != len(names):
        raise RecordError(f"{what}: expected one goal per agent ({len(names)}), got {len(items)}")
    return [goal_vector(v, scene, f"{what}[{k}]") for k, v in enumerate(items)]


def channel_value(value: Any, names: Sequence[str], what: str) -> np.ndarray:
    """A channel's value at one step: a number, or one number per agent (``(A,)``)."""
    if isinstance(value, Mapping):
        return per_agent(value, names, 1, what, np.full(len(names), np.nan)).reshape(-1)
    if value is None:
        return np.asarray(np.nan)
    try:
        arr = np.array(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise RecordError(f"{what}: expected a number, got {type(value).__name__}") from None
    if arr.ndim == 0 or arr.shape == (len(names),):
        return arr
    if arr.size == 1:
        return arr.reshape(())
    raise RecordError(f"{what}: expected a number or one per agent, got shape {arr.shape}")


def action_width(space: Any) -> int | None:
    """Numbers an action of ``space`` flattens to, or None when it is not numeric."""
    from gymnasium import spaces

    if isinstance(space, spaces.Discrete):
        return 1
    if isinstance(space, spaces.Box | spaces.MultiBinary | spaces.MultiDiscrete):
        return int(np.prod(space.shape))
    return None


__all__ = [
    "RecordError",
    "Source",
    "action_width",
    "channel_value",
    "from_infos",
    "goal_vector",
    "match_agents",
    "per_agent",
    "pursued_vectors",
    "resolve",
]


def message_list(value: Any, scene: Scene, names: Sequence[str], what: str) -> list[Any]:
    """An episode's messages (the tape's structure, :mod:`core.tape.message_format`) from a
    list, or from a mapping by agent name (per-agent infos: the lists joined in agent order).
    Environment agent names in ``from``/``to`` become scene agent ids."""
    from arena_studio.core.tape.message_format import parse_message

    if value is None:
        return []
    if isinstance(value, Mapping) and not ({"from", "value"} & set(value)):
        value = [m for n in names for m in (value.get(n) or [])]
    elif isinstance(value, Mapping):
        value = [value]
    if not isinstance(value, list | tuple):
        raise RecordError(f"{what}: expected a list of messages, got {type(value).__name__}")
    ids = [a.id for a in scene.agents]
    rename = {str(n): ids[k] for k, n in enumerate(names)}
    out = []
    for i, raw in enumerate(value):
        entry = dict(raw) if isinstance(raw, Mapping) else raw
        if isinstance(entry, dict):
            for key in ("from", "to"):
                if entry.get(key) is not None and str(entry[key]) in rename:
                    entry[key] = rename[str(entry[key])]
        try:
            parse_message(entry, ids, f"{what}[{i}]")
        except ValueError as exc:
            raise RecordError(str(exc)) from None
        out.append(entry)
    return out
