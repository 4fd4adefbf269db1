"""Hypothesis strategies for hostile input: option values, argument vectors, scene documents,
tape bytes and the numbers inside them, CSV text and NPZ arrays."""

from __future__ import annotations

import os
from typing import Any

from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

from arena_studio.core.resources import demo_path

SCENE = str(demo_path("greenhouse.scene.json"))
TAPE = str(demo_path("greenhouse-greedy.tape"))

#: Option values a careless or malicious user types (IEEE 754 specials, extremes, junk).
HOSTILE_TEXT = [
    "nan",
    "NaN",
    "inf",
    "-inf",
    "Infinity",
    "1e309",
    "-1e309",
    "1e-9",
    "1e9",
    "1e300",
    "-1e300",
    "5e-324",
    "1e154",
    "-1",
    "0",
    "-0",
    "0.0",
    "",
    " ",
    "abc",
    "0x10",
    "1_000",
    " 3",
    "99999999999999999999999",
    "1e3",
    "2.5",
    "-2.5",
    "7680",
    "7681",
    "16",
    "15",
]


_COMMON: dict[str, Any] = {
    "deadline": None,  # no wall-clock limits: resource limits guard the heavy cases
    "suppress_health_check": [
        HealthCheck.too_slow,
        HealthCheck.function_scoped_fixture,
        HealthCheck.data_too_large,
        HealthCheck.filter_too_much,
    ],
}
# ``make test``: a few examples per test, the same every run (a CI failure reproduces);
# ``make fuzz`` (ARENA_FUZZ=long): many, new ones each run. Only the fuzz tests use these
# profiles (through fuzz_settings), so other hypothesis tests keep their own settings.
settings.register_profile("fuzz-short", max_examples=8, derandomize=True, **_COMMON)
settings.register_profile("fuzz-long", max_examples=300, **_COMMON)


def fuzz_settings() -> settings:
    """The long profile under ``ARENA_FUZZ=long`` (``make fuzz``), else the short one."""
    long = os.environ.get("ARENA_FUZZ", "") == "long"
    chosen = settings.get_profile("fuzz-long" if long else "fuzz-short")
    count = os.environ.get("ARENA_FUZZ_EXAMPLES", "")  # e.g. a quick look at many cases
    return settings(chosen, max_examples=int(count)) if count.isdigit() else settings(chosen)


def number_text() -> st.SearchStrategy[str]:
    return st.one_of(
        st.sampled_from(HOSTILE_TEXT),
        st.floats(allow_nan=True, allow_infinity=True).map(repr),
        st.integers(-(10**20), 10**20).map(str),
        st.text(max_size=6),
    )


# -- argument vectors ----------------------------------------------------------------------
#: Per command: fixed leading arguments (OUT is replaced by a file in the test's folder),
#: numeric options to fuzz, other options with value choices, and arguments appended last
#: that keep a run cheap (argparse converts every occurrence, so the fuzzed values are
#: still checked, and the last value wins).
COMMANDS: dict[str, dict[str, Any]] = {
    "render": {
        "lead": [TAPE, "-o"],
        "outputs": ["OUT.png", "OUT.svg", "OUT.gif", "OUTframes", "OUT.txt"],
        "numeric": [
            "--start",
            "--end",
            "--time",
            "--trail",
            "--title-seconds",
            "--fps",
            "--speed",
            "--scale",
            "--dpi",
            "--episode",
        ],
        "choices": {
            "--size": ["720p", "64x64", "0x0", "99999x5", "x", "16x16"],
            "--theme": ["light", "dark", "blue"],
            "--roles": ["auto", "none", "tape", "x"],
            "--title": ["T", ""],
            "--compare": ["0 1"],
        },
        "tail": ["--size", "64x64", "--end", "0.4", "--scale", "0.2"],
    },
    "rollout": {
        "lead": [SCENE, "-o"],
        "outputs": ["OUT.tape"],
        "numeric": ["--episodes", "--seed", "--max-time", "--dt"],
        "choices": {
            "--goals": ["shared", "independent", "greedy", "x"],
            "--par-limit": ["0.8,2", "nan,1", "1", "2,1", "inf,inf", "-1,2"],
        },
        "tail": ["--episodes", "1", "--max-time", "2", "--dt", "0.1", "--quiet"],
    },
    "export": {
        "lead": [SCENE, "-o"],
        "outputs": ["OUT.json", "OUT.npz", "OUT.svg", "OUT"],
        "numeric": ["--resolution", "--clearance"],
        "choices": {"--format": ["json", "msgpack", "npz", "wkt", "svg", "grid", "pdf"]},
        "tail": ["--format", "wkt"],
    },
    "import": {
        "lead": ["csv", "IN.csv", "--scene", SCENE, "-o"],
        "outputs": ["OUT.tape"],
        "numeric": ["--dt"],
        "choices": {"--columns": ["x=pos_x", "bad", "x=", "zz=y"]},
        "tail": ["--quiet"],
    },
    "stats": {
        "lead": [TAPE],
        "outputs": [],
        "numeric": ["--episode"],
        "choices": {"--json": [], "--csv": []},
        "tail": ["--quiet"],
    },
    "check": {"lead": [SCENE], "outputs": [], "numeric": [], "choices": {"--json": []}, "tail": []},
    "goals": {
        "lead": [SCENE],
        "outputs": [],
        "numeric": [],
        "choices": {"--json": []},
        "tail": ["--quiet"],
    },
    "app": {
        "lead": ["--screenshot"],
        "outputs": ["OUT.png"],
        "numeric": ["--time", "--episode"],
        "choices": {"--theme": ["light", "dark", "x"]},
        "tail": [TAPE],
    },
}


@st.composite
def argument_vectors(draw: st.DrawFn, command: str) -> list[str]:
    """One argument vector for ``command`` with a few fuzzed options (OUT/IN placeholders)."""
    spec = COMMANDS[command]
    argv = [command, *spec["lead"]]
    if spec["outputs"]:
        argv.append(draw(st.sampled_from(spec["outputs"])))
    options = spec["numeric"] + list(spec["choices"])
    picked = draw(st.lists(st.sampled_from(options), max_size=4)) if options else []
    for opt in picked:
        if opt in spec["numeric"]:
            argv += [f"{opt}={draw(number_text())}"]
        else:
            values = spec["choices"][opt]
            argv += [opt, *draw(st.sampled_from(values)).split()] if values else [opt]
    # the cheap tail goes last (its values win) or before the fuzzed options (theirs win)
    tail = spec["tail"]
    at = 1 + len(spec["lead"]) + (1 if spec["outputs"] else 0)
    return [*argv[:at], *tail, *argv[at:]] if draw(st.booleans()) else [*argv, *tail]


# -- scene documents -----------------------------------------------------------------------
def hostile_float() -> st.SearchStrategy[float]:
    return st.one_of(
        st.sampled_from(
            [
                0.0,
                -0.0,
                1e-300,
                5e-324,
                1e154,
                1e308,
                -1e308,
                3.4028234663852886e38,
                1e15,
                0.25,
                1.0,
                10.0,
            ]
        ),
        st.floats(allow_nan=False, allow_infinity=False, width=64),
        st.floats(-50, 50),
    )


def point() -> st.SearchStrategy[list[float]]:
    return st.lists(st.floats(-20, 60), min_size=2, max_size=2)


def polygon() -> st.SearchStrategy[list[list[float]]]:
    """Any ring of points: convex, concave, self-crossing (bowties), repeated, collinear."""
    bowtie = st.just([[0, 0], [4, 4], [4, 0], [0, 4]])
    return st.one_of(bowtie, st.lists(point(), min_size=0, max_size=12))


@st.composite
def scene_documents(draw: st.DrawFn) -> dict[str, Any]:
    """A demo-like scene with some fields replaced by hostile values or shapes."""
    import json

    with open(SCENE, encoding="utf-8") as f:
        doc: dict[str, Any] = json.load(f)
    for _ in range(draw(st.integers(1, 4))):
        kind = draw(
            st.sampled_from(["room", "obstacle", "circle", "landmark", "agent", "region", "goals"])
        )
        if kind == "room":
            doc["rooms"].append({"id": f"r{len(doc['rooms'])}", "outline": draw(polygon())})
        elif kind == "obstacle":
            doc["obstacles"].append({"id": "o-new", "outline": draw(polygon())})
        elif kind == "circle":
            doc["obstacles"].append(
                {
                    "id": "c-new",
                    "circle": {
                        "center": [draw(hostile_float()), draw(hostile_float())],
                        "radius": draw(hostile_float()),
                    },
                }
            )
        elif kind == "landmark":
            lm = dict(doc["landmarks"][0])
            lm.update(
                id="lm-new",
                position=[draw(hostile_float()), draw(hostile_float())],
                reach_radius=draw(hostile_float()),
            )
            doc["landmarks"].append(lm)
        elif kind == "agent":
            ag = dict(doc["agents"][0])
            ag.update(
                id="ag-new",
                radius=draw(hostile_float()),
                max_speed=draw(hostile_float()),
                start={"pose": [draw(hostile_float()), draw(hostile_float()), 0.0]},
            )
            doc["agents"].append(ag)
        elif kind == "region":
            doc["agents"][-1] = dict(doc["agents"][-1], start={"region": draw(polygon())})
        elif kind == "goals":
            doc["goals"] = dict(
                doc["goals"],
                families=draw(st.lists(st.integers(-1, 12), max_size=4, unique=True)),
                hold_time=draw(hostile_float()),
            )
    if draw(st.booleans()):  # last, so the structured changes above still find their lists
        key = draw(st.sampled_from(list(doc)))
        doc[key] = draw(
            st.one_of(
                st.none(),
                st.integers(),
                st.text(max_size=5),
                st.lists(st.integers(), max_size=3),
            )
        )
    return doc
