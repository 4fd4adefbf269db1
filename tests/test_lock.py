"""The lock pins, with hashes, every package pyproject.toml names, within pyproject's ranges.

`make run`, `make test` and CI install requirements/lock.txt with `pip --require-hashes`, so a
package pyproject names but the lock lacks would fail the install on a fresh machine, and a pin
outside pyproject's range would test versions a pip user can never get. Requirements, markers
and version ranges are read with `packaging` (the reference implementation of PEP 508
dependency specifiers and PEP 440 versions); the lock is pip's requirements-file format
(backslash line continuations, `--hash=sha256:...` options, as pip's documentation describes).
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

import pytest
from packaging.markers import default_environment
from packaging.requirements import Requirement
from packaging.utils import canonicalize_name
from packaging.version import Version

ROOT = Path(__file__).resolve().parents[1]
LOCK = ROOT / "requirements" / "lock.txt"
PYPROJECT = ROOT / "pyproject.toml"
SHA256 = re.compile(r"--hash=sha256:([0-9a-f]{64})\b")


@dataclass(frozen=True)
class Pin:
    requirement: Requirement  # name==version ; marker
    hashes: tuple[str, ...]

    @property
    def version(self) -> Version:
        (spec,) = self.requirement.specifier
        return Version(spec.version)


def read_lock(text: str) -> list[Pin]:
    """Pins of a pip requirements file: one entry per logical (continued) line."""
    pins = []
    for line in text.replace("\\\n", " ").splitlines():
        line = re.sub(r"(^|\s)#.*", "", line).strip()  # comments: whole-line or after a space
        if not line:
            continue
        spec = line.split(" --", 1)[0].strip()
        pins.append(Pin(Requirement(spec), tuple(SHA256.findall(line))))
    return pins


def project() -> dict:
    return tomllib.loads(PYPROJECT.read_text(encoding="utf-8"))["project"]


def named_requirements() -> list[tuple[str, Requirement]]:
    """(where, requirement) for the core dependencies and every extra (the lock has them all:
    `make lock` compiles with --all-extras, and `make test` installs the whole lock)."""
    proj = project()
    own = canonicalize_name(proj["name"])
    out = [("dependencies", Requirement(r)) for r in proj["dependencies"]]
    for extra, reqs in proj.get("optional-dependencies", {}).items():
        for r in reqs:
            req = Requirement(r)
            if canonicalize_name(req.name) != own:  # "arena-studio[x]" names extras, not a pin
                out.append((f"optional-dependencies.{extra}", req))
    return out


def applies(req: Requirement, extra: str = "") -> bool:
    """Whether a marker holds on this interpreter (PEP 508 marker evaluation)."""
    return req.marker is None or req.marker.evaluate({**default_environment(), "extra": extra})


@pytest.fixture(scope="module")
def pins() -> list[Pin]:
    return read_lock(LOCK.read_text(encoding="utf-8"))


def test_every_pin_is_exact_and_hashed(pins: list[Pin]) -> None:
    assert len(pins) > 20
    for pin in pins:
        specs = list(pin.requirement.specifier)
        assert len(specs) == 1 and specs[0].operator == "==", pin.requirement
        assert pin.hashes, f"{pin.requirement.name} has no hash in the lock"
        assert not pin.requirement.extras and pin.requirement.url is None


def test_one_pin_per_package_on_this_python(pins: list[Pin]) -> None:
    seen: dict[str, int] = {}
    for pin in pins:
        if applies(pin.requirement):
            name = canonicalize_name(pin.requirement.name)
            seen[name] = seen.get(name, 0) + 1
    assert {n: c for n, c in seen.items() if c > 1} == {}


def test_pyproject_packages_are_locked_within_their_ranges(pins: list[Pin]) -> None:
    here = {canonicalize_name(p.requirement.name): p for p in pins if applies(p.requirement)}
    checked = 0
    for where, req in named_requirements():
        # markers are honoured for this Python: "PySide6-Essentials<6.12; python_version <
        # '3.12'" is checked on 3.11, its twin for 3.12+ only there
        extra = where.rsplit(".", 1)[1] if where.startswith("optional") else ""
        if not applies(req, extra):
            continue
        name = canonicalize_name(req.name)
        assert name in here, f"{req.name} ({where}) is not in {LOCK.name}: run `make lock`"
        pin = here[name]
        assert pin.hashes, f"{req.name} is pinned without a hash"
        assert req.specifier.contains(pin.version, prereleases=True), (
            f"{req.name} {pin.version} in the lock is outside pyproject's {req.specifier} "
            f"({where}): run `make lock`"
        )
        checked += 1
    assert checked >= len(project()["dependencies"]) - 1  # one PySide6 line per Python


def test_reader_sees_what_a_pin_means() -> None:
    # a hand-written entry in pip's format (pip documentation, "Hash-checking mode")
    text = (
        "# comment\n"
        "numpy==2.4.6 ; python_full_version < '3.12' \\\n"
        "    --hash=sha256:" + "a" * 64 + " \\\n"
        "    --hash=sha256:" + "b" * 64 + "\n"
        "    # via arena-studio\n"
        "msgpack==1.2.4 \\\n"
        "    --hash=sha256:" + "c" * 64 + "\n"
    )
    numpy, msgpack = read_lock(text)
    assert numpy.requirement.name == "numpy" and numpy.version == Version("2.4.6")
    assert numpy.hashes == ("a" * 64, "b" * 64)
    assert str(numpy.requirement.marker) == 'python_full_version < "3.12"'
    assert msgpack.hashes == ("c" * 64,) and msgpack.requirement.marker is None
    # a range check that must fail: 6.12.0 is outside "<6.12" (PEP 440 ordering)
    assert not Requirement("PySide6-Essentials>=6.8,<6.12").specifier.contains("6.12.0")
