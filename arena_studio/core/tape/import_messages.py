"""Messages for imported episodes: a CSV messages file, or an NPZ ``messages`` array.

CSV (one row per message; the header names the columns, in any order)::

    episode,from,to,step,value

``episode`` is the episode's label in the episodes CSV (for an NPZ import: the episode index
0, 1, ...); ``from`` and ``to`` are scene agent ids (``to`` empty: everyone); ``step`` empty
means before the episode; ``value`` is an integer, a short text, or integers joined by ``;``
(a list). NPZ: ``messages`` (E, A) integers, entry ``[e, a]`` the value agent ``a`` said to
everyone before episode ``e``, -1 for nothing. Every message is checked as the tape writer
checks it (:mod:`.message_format`); errors name the file and the line (or the array).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from arena_studio.core.import_rows import ImportFormatError
from arena_studio.core.safe_open import open_input
from arena_studio.core.tape.message_format import FIELDS, parse_message

COLUMNS = ("episode", *FIELDS)


def read_messages_csv(
    path: str | Path, agent_ids: Sequence[str]
) -> dict[str, list[dict[str, Any]]]:
    """Episode label -> its messages in file order."""
    src = str(path)
    out: dict[str, list[dict[str, Any]]] = {}
    raw = open_input(path, "csv")
    with io.TextIOWrapper(raw, newline="", encoding="utf-8-sig") as handle:
        reader = csv.reader(handle)
        try:
            header = [h.strip() for h in next(reader)]
        except StopIteration:
            raise ImportFormatError(f"{src}: the messages file is empty") from None
        except (csv.Error, UnicodeDecodeError) as exc:
            raise ImportFormatError(f"{src}: line 1: {exc}") from None
        missing = [c for c in COLUMNS if c not in header]
        if missing:
            raise ImportFormatError(f"{src}: line 1: missing column(s) {', '.join(missing)}")
        col = {c: header.index(c) for c in COLUMNS}
        try:
            for row in reader:
                if not row or all(not c.strip() for c in row):
                    continue
                line = reader.line_num
                if len(row) < len(header):
                    raise ImportFormatError(
                        f"{src}: line {line}: {len(row)} cells, expected {len(header)}"
                    )
                cell = {c: row[i].strip() for c, i in col.items()}
                entry = {
                    "from": cell["from"],
                    "to": cell["to"] or None,
                    "step": _step(src, line, cell["step"]),
                    "value": _value(cell["value"]),
                }
                _check(entry, agent_ids, f"{src}: line {line}")
                out.setdefault(cell["episode"], []).append(entry)
        except (csv.Error, UnicodeDecodeError) as exc:
            raise ImportFormatError(f"{src}: line {reader.line_num + 1}: {exc}") from None
    return out


def _step(src: str, line: int, text: str) -> int | None:
    if not text:
        return None
    try:
        return int(text)
    except ValueError:
        raise ImportFormatError(
            f"{src}: line {line}: column step: expected a whole number or nothing, "
            f"got {text[:40]!r}"
        ) from None


def _value(text: str) -> Any:
    """An integer, integers joined by ``;`` (a list), or the text itself."""
    try:
        return int(text)
    except ValueError:
        pass
    if ";" in text:
        try:
            return [int(p) for p in text.split(";")]
        except ValueError:
            return text
    return text


def _check(entry: dict[str, Any], agent_ids: Sequence[str], where: str) -> None:
    try:
        parse_message(entry, agent_ids, "message")
    except ValueError as exc:
        raise ImportFormatError(f"{where}: {exc}") from None


def messages_of_array(
    src: str, arr: np.ndarray, episodes: int, agent_ids: Sequence[str]
) -> list[list[dict[str, Any]]]:
    """Per episode, the messages of an NPZ ``messages`` (E, A) array (-1: nothing said)."""
    if arr.dtype.kind not in "iu" or arr.shape != (episodes, len(agent_ids)):
        raise ImportFormatError(
            f"{src}: array messages: expected integers of shape ({episodes}, {len(agent_ids)}), "
            f"got {arr.dtype.str} {arr.shape}"
        )
    return [
        [
            {"from": agent_ids[a], "to": None, "step": None, "value": int(arr[e, a])}
            for a in range(len(agent_ids))
            if arr[e, a] >= 0
        ]
        for e in range(episodes)
    ]


__all__ = ["COLUMNS", "messages_of_array", "read_messages_csv"]
