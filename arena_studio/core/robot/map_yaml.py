"""Read a ROS map-server map: its YAML description, its image, and each cell's occupancy.

The YAML fields are the ones the map_server documentation defines (common practice):
``image`` (path, relative to the YAML file), ``resolution`` (metres per cell), ``origin``
``[x, y, yaw]`` (pose of the lower-left pixel in the map frame), ``negate``,
``occupied_thresh``, ``free_thresh`` and ``mode`` (``trinary``, ``scale`` or ``raw``).

Occupancy, as that documentation states it: a pixel's value ``v`` (the mean of its colour
channels) becomes ``p = (255 - v) / 255`` (``p = v / 255`` with ``negate``); ``p >
occupied_thresh`` is occupied, ``p < free_thresh`` is free, anything else unknown. ``scale``
uses the same two thresholds (values between them are unknown here, they are not walls or
floor) and a transparent pixel is unknown. ``raw`` takes ``v`` as the occupancy in percent
(``negate`` ignored): ``v <= 100 * free_thresh`` free, ``100 * occupied_thresh <= v <= 100``
occupied, anything else unknown.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from arena_studio.core.robot.errors import RobotImportError

MODES = ("trinary", "scale", "raw")
FREE, OCCUPIED, UNKNOWN = 0, 1, 2
#: defaults for the optional fields (the values of the documentation's example map)
DEFAULT_OCCUPIED = 0.65
DEFAULT_FREE = 0.196
#: a map image larger than this many pixels is refused before it is decoded
MAX_PIXELS = 200_000_000


@dataclass(frozen=True)
class MapInfo:
    """A map's description; ``image`` is resolved against the YAML file's folder."""

    image: Path
    resolution: float
    origin: tuple[float, float, float]
    negate: bool = False
    occupied_thresh: float = DEFAULT_OCCUPIED
    free_thresh: float = DEFAULT_FREE
    mode: str = "trinary"
    source: str = ""


@dataclass(frozen=True)
class OccupancyMap:
    """Cells classified FREE / OCCUPIED / UNKNOWN; row 0 is the image's top row."""

    info: MapInfo
    cells: np.ndarray  # (H, W) uint8
    pixels: np.ndarray  # (H, W) uint8 grey, what the image showed


def read_map_yaml(path: str | Path) -> MapInfo:
    """Parse the YAML; errors name the file and the field."""
    import yaml

    from arena_studio.core.safe_open import read_input

    src = str(path)
    p = Path(path)
    try:
        text = read_input(p, "map").decode("utf-8")  # a regular file within its bound
    except UnicodeDecodeError as exc:
        raise RobotImportError(f"{src}: not UTF-8 text (byte {exc.start})") from None
    try:
        doc = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1}: " if mark is not None else ""
        raise RobotImportError(f"{src}: {where}not valid YAML") from None
    if not isinstance(doc, dict):
        raise RobotImportError(f"{src}: expected a mapping of map fields")
    return parse_map_fields(doc, p.parent, src)


def parse_map_fields(doc: dict[str, Any], folder: Path, src: str) -> MapInfo:
    """Check the documented fields of a parsed map description."""
    for key in ("image", "resolution", "origin"):
        if key not in doc:
            raise RobotImportError(f"{src}: {key}: missing required field")
    image = doc["image"]
    if not isinstance(image, str) or not image.strip():
        raise RobotImportError(f"{src}: image: expected a file name")
    resolution = _number(doc["resolution"], src, "resolution")
    if resolution <= 0:
        raise RobotImportError(f"{src}: resolution: expected metres per cell > 0")
    origin = doc["origin"]
    if not isinstance(origin, list) or len(origin) not in (2, 3):
        raise RobotImportError(f"{src}: origin: expected [x, y, yaw]")
    xyz = [_number(v, src, f"origin[{i}]") for i, v in enumerate(origin)]
    if len(xyz) == 2:
        xyz.append(0.0)
    negate = doc.get("negate", 0)
    if negate not in (0, 1) or isinstance(negate, float):
        raise RobotImportError(f"{src}: negate: expected 0 or 1, got {negate!r}")
    occ = _number(doc.get("occupied_thresh", DEFAULT_OCCUPIED), src, "occupied_thresh")
    free = _number(doc.get("free_thresh", DEFAULT_FREE), src, "free_thresh")
    if not 0 <= free < occ <= 1:
        raise RobotImportError(
            f"{src}: free_thresh {free} and occupied_thresh {occ}: expected "
            "0 <= free_thresh < occupied_thresh <= 1"
        )
    mode = doc.get("mode", "trinary")
    if mode not in MODES:
        raise RobotImportError(f"{src}: mode: expected one of {', '.join(MODES)}, got {mode!r}")
    return MapInfo(
        image=folder / image,
        resolution=resolution,
        origin=(xyz[0], xyz[1], xyz[2]),
        negate=bool(negate),
        occupied_thresh=occ,
        free_thresh=free,
        mode=mode,
        source=src,
    )


def _number(value: object, src: str, field: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise RobotImportError(f"{src}: {field}: expected a number, got {value!r}")
    return float(value)


def read_image(path: Path) -> tuple[np.ndarray, np.ndarray | None]:
    """Grey values (mean of the colour channels) and the alpha channel, if any."""
    from PIL import Image

    from arena_studio.core.safe_open import InputFileError, open_input

    src = str(path)
    try:
        with open_input(path, "map image") as f, Image.open(f) as img:
            w, h = img.size
            if w * h > MAX_PIXELS:
                raise RobotImportError(f"{src}: {w}x{h} pixels, more than a map import takes")
            img.load()
            return _channels(img)
    except RobotImportError:
        raise
    except InputFileError as exc:
        if not path.exists():
            raise RobotImportError(f"{src}: map image not found") from None
        raise RobotImportError(str(exc)) from None
    except (OSError, ValueError, Image.DecompressionBombError) as exc:
        raise RobotImportError(f"{src}: not a readable image ({exc})") from None


def _channels(img: Any) -> tuple[np.ndarray, np.ndarray | None]:
    if img.mode in ("1", "P", "PA", "I;16", "I", "F"):
        img = img.convert("RGBA" if "A" in img.mode or img.mode == "P" else "L")
    arr = np.asarray(img)
    if arr.ndim == 2:
        return arr.astype(np.uint8), None
    bands = img.getbands()
    alpha = arr[..., bands.index("A")].astype(np.uint8) if "A" in bands else None
    colour = [i for i, b in enumerate(bands) if b != "A"]
    grey = np.rint(arr[..., colour].astype(np.float64).mean(axis=2)).astype(np.uint8)
    if alpha is not None and bool((alpha == 255).all()):
        alpha = None
    return grey, alpha


def classify(grey: np.ndarray, info: MapInfo, alpha: np.ndarray | None = None) -> np.ndarray:
    """FREE / OCCUPIED / UNKNOWN per cell, following the map_server interpretation."""
    v = grey.astype(np.float64)
    out = np.full(grey.shape, UNKNOWN, dtype=np.uint8)
    if info.mode == "raw":
        out[v <= 100.0 * info.free_thresh] = FREE
        out[(v >= 100.0 * info.occupied_thresh) & (v <= 100.0)] = OCCUPIED
        return out
    p = v / 255.0 if info.negate else (255.0 - v) / 255.0
    out[p > info.occupied_thresh] = OCCUPIED
    out[p < info.free_thresh] = FREE
    if info.mode == "scale" and alpha is not None:
        out[alpha < 255] = UNKNOWN
    return out


def read_map(path: str | Path) -> OccupancyMap:
    """YAML + image -> classified cells."""
    info = read_map_yaml(path)
    grey, alpha = read_image(info.image)
    return OccupancyMap(info=info, cells=classify(grey, info, alpha), pixels=grey)


__all__ = [
    "FREE",
    "MODES",
    "OCCUPIED",
    "UNKNOWN",
    "MapInfo",
    "OccupancyMap",
    "classify",
    "parse_map_fields",
    "read_image",
    "read_map",
    "read_map_yaml",
]
