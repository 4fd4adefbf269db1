"""Start-up: from launching ``arena-studio`` to the main window's first completed paint.

Run with ``make bench``, or alone:
``QT_QPA_PLATFORM=offscreen .venv/bin/pytest tests/bench/bench_startup.py -s``.
Each case starts the real app as a child process ``ARENA_BENCH_STARTS`` times (default 5)
with fresh settings (a new temporary ``XDG_CONFIG_HOME`` and ``XDG_DATA_HOME`` each time):

- no argument: the bundled demo scene in the layout editor (what ``make run`` opens);
- the failure demo tape ``scenes/greenhouse-greedy.tape`` in the replay mode.

The child reports the wall time of its first paint through the measuring hook of
``arena_studio.app.startup`` (``ARENA_STUDIO_REPORT_SHOWN``) and quits; the time counts from
just before the child is launched. A bare PySide6 window started the same way is the floor of
this run (interpreter, Qt, display connection), so the ratio app / floor is comparable
between runs on a noisy machine. The windows go to a private Xvfb display (1280x800) when
``Xvfb`` is on PATH (``ARENA_BENCH_DISPLAY=N`` picks its number, else Xvfb picks a free one),
else to Qt's offscreen platform; the output says which. One more start per case under
``python -X importtime`` lists the modules that took longest to import before the first paint.
Both with compiled bytecode cached (a private ``PYTHONPYCACHEPREFIX``, filled by one
unmeasured start: an installed app) and with none written (``PYTHONDONTWRITEBYTECODE=1``:
a source tree without ``__pycache__`` compiles every module it imports, ~1 ms each).
Target (issue 17): median under 0.6 s for both cases. Nothing is asserted about time.
"""

from __future__ import annotations

import json
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
TARGET_S = 0.6
FLOOR = "bare PySide6 window (floor)"
CASES = {
    "no argument (demo scene)": [],
    "greenhouse-greedy.tape": [str(ROOT / "scenes" / "greenhouse-greedy.tape")],
}
BARE_WINDOW = """
import json, os, sys, time
from PySide6.QtCore import QEvent, QObject, QTimer
from PySide6.QtWidgets import QApplication, QLabel, QMainWindow
app = QApplication(sys.argv[:1])
window = QMainWindow()
window.setCentralWidget(QLabel("floor"))
window.resize(1280, 760)
class Once(QObject):
    done = False
    def eventFilter(self, obj, event):
        if event.type() == QEvent.Type.Paint and not self.done:
            self.done = True
            QTimer.singleShot(0, report)
        return False
def report():
    with open(os.environ["ARENA_STUDIO_REPORT_SHOWN"], "w") as f:
        json.dump({"shown": time.time(), "modules": sorted(sys.modules)}, f)
    window.close()
once = Once()
window.installEventFilter(once)
window.show()
app.exec()
"""


@contextmanager
def display() -> Iterator[tuple[dict[str, str], str]]:
    """Environment for the children and a description of where their windows go."""
    xvfb = shutil.which("Xvfb")
    if xvfb is None:
        yield {"QT_QPA_PLATFORM": "offscreen"}, "Qt offscreen platform (no Xvfb on PATH)"
        return
    wanted = os.environ.get("ARENA_BENCH_DISPLAY")
    read, write = os.pipe()
    args = [xvfb, "-screen", "0", "1280x800x24", "-nolisten", "tcp"]
    args = [*args, f":{wanted}"] if wanted else [*args, "-displayfd", str(write)]
    proc = subprocess.Popen(
        args, pass_fds=(write,), stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL
    )
    os.close(write)
    try:
        with os.fdopen(read, "r") as numbers:  # -displayfd: Xvfb writes the number it took
            number = wanted or numbers.readline().strip()
        end = time.monotonic() + 10
        while not Path(f"/tmp/.X11-unix/X{number}").exists() and time.monotonic() < end:
            time.sleep(0.05)
        if proc.poll() is not None or not number:
            raise RuntimeError("Xvfb did not start")
        yield {"DISPLAY": f":{number}", "QT_QPA_PLATFORM": "xcb"}, f"Xvfb :{number} 1280x800"
    finally:
        proc.terminate()
        proc.wait(10)


def start_once(
    base: dict[str, str], command: list[str], extra: tuple[str, ...] = ()
) -> tuple[float, list[str], str]:
    """(seconds to the first paint, modules loaded by then, stderr) of one fresh start with
    environment ``base`` (display and bytecode settings)."""
    with tempfile.TemporaryDirectory(prefix="arena-bench-start-") as tmp:
        report = Path(tmp) / "shown.json"
        env = {
            **base,
            "PYTHONPATH": str(ROOT),
            "XDG_CONFIG_HOME": str(Path(tmp) / "config"),
            "XDG_DATA_HOME": str(Path(tmp) / "data"),
            "ARENA_STUDIO_REPORT_SHOWN": str(report),
            "ARENA_STUDIO_QUIT_AFTER_SHOWN": "1",
        }
        t0 = time.time()
        proc = subprocess.run(
            [sys.executable, *extra, *command],
            env=env,
            cwd=tmp,
            capture_output=True,
            text=True,
            timeout=120,
        )
        if not report.exists():
            raise RuntimeError(f"no first paint reported (exit {proc.returncode}): {proc.stderr}")
        data = json.loads(report.read_text())
        return float(data["shown"]) - t0, list(data["modules"]), proc.stderr


def import_breakdown(stderr: str, before_paint: set[str], top: int = 15) -> list[str]:
    """The ``-X importtime`` lines of modules loaded before the first paint, slowest first
    (self time), and the total."""
    rows: list[tuple[int, int, str]] = []
    for line in stderr.splitlines():
        if not line.startswith("import time:") or "self [us]" in line:
            continue
        own, cumulative, name = line[len("import time:") :].split("|")
        module = name.strip()
        if module in before_paint:
            rows.append((int(own), int(cumulative), module))
    total = sum(r[0] for r in rows)
    out = [f"    {own / 1000:6.1f} ms self {cum / 1000:7.1f} ms cumulative  {name}"
           for own, cum, name in sorted(rows, reverse=True)[:top]]  # fmt: skip
    out.append(f"    {total / 1000:6.1f} ms in {len(rows)} modules imported before the paint")
    return out


def _spread(values: list[float]) -> str:
    return " ".join(f"{v:.3f}" for v in sorted(values))


def bytecode(screen: dict[str, str], cached: bool, folder: Path) -> tuple[dict[str, str], str]:
    """The children's environment and a title: compiled bytecode kept in a private folder
    (as an installed app has it after its first start), or none written at all (every start
    compiles the project's sources again, as with PYTHONDONTWRITEBYTECODE=1)."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"} | screen
    if cached:
        return env | {"PYTHONPYCACHEPREFIX": str(folder)}, "bytecode cached"
    title = "no bytecode written (PYTHONDONTWRITEBYTECODE=1; sources without __pycache__ compile)"
    return env | {"PYTHONDONTWRITEBYTECODE": "1"}, title


def test_bench_startup(tmp_path: Path) -> None:
    starts = int(os.environ.get("ARENA_BENCH_STARTS", "5"))
    app = ["-m", "arena_studio.cli", "app"]
    with display() as (screen, where):
        print(f"\nstart-up to the first paint, {starts} fresh starts per case, on {where}")
        breakdowns: dict[str, list[str]] = {}
        for cached in (True, False):
            env, title = bytecode(screen, cached, tmp_path / "pycache")
            print(f"  {title}:")
            if cached:  # the unmeasured starts that fill the cache
                start_once(env, ["-c", BARE_WINDOW])
                for args in CASES.values():
                    start_once(env, [*app, *args])
            # round robin, so a burst of load elsewhere on the machine hits every case alike
            runs: dict[str, list[float]] = {FLOOR: [], **{name: [] for name in CASES}}
            for _ in range(starts):
                runs[FLOOR].append(start_once(env, ["-c", BARE_WINDOW])[0])
                for name, args in CASES.items():
                    runs[name].append(start_once(env, [*app, *args])[0])
            floor_median = statistics.median(runs[FLOOR])
            for name, times in runs.items():
                median = statistics.median(times)
                line = f"    {name:28s} median {median:.3f} s  [{_spread(times)}]"
                if name != FLOOR:
                    verdict = "meets" if median < TARGET_S else "misses"
                    line += (
                        f"  {median / floor_median:.1f}x floor; {verdict} the {TARGET_S} s target"
                    )
                print(line)
            if cached:
                for name, args in CASES.items():
                    _, modules, stderr = start_once(env, [*app, *args], ("-X", "importtime"))
                    breakdowns[name] = import_breakdown(stderr, set(modules))
        for name, lines in breakdowns.items():
            print(f"  imports before the first paint, {name} (bytecode cached, -X importtime):")
            print("\n".join(lines))
