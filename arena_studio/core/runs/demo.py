"""The demo sweep: scripted teams whose play improves over "checkpoints", three conditions.

Our own scenario, no learned policy: a condition fixes how often a team's agents pursue one
shared goal (``shared_share``, rising with training for two of the conditions) and the
checkpoint fixes how quickly they move (``skill``, rising with training at a pace that differs
a little by seed). Each tape's header carries ``condition``, ``seed`` and ``step`` (the layout
``{condition}/seed{seed}/step{step}.tape`` says the same). Reproducible bit for bit.

``python -m arena_studio.core.runs.demo OUT_DIR [SCENE ...]`` (``make demos`` runs it).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path

#: condition -> (shared share at step 0, shared share at the last step)
CONDITIONS: dict[str, tuple[float, float]] = {
    "one-goal": (0.5, 0.95),
    "mixed": (0.3, 0.6),
    "own-goals": (0.15, 0.15),
}
SEEDS = (1, 2, 3, 4)
STEPS = (0, 20_000, 40_000, 60_000, 80_000, 100_000)
EPISODES = 8
#: time limit between these multiples of the goal's par time (slow teams run out of time)
PAR_LIMIT = (0.9, 2.0)
DT = 0.2


def knobs(condition: str, seed: int, step_index: int) -> tuple[float, float]:
    """(skill, shared share) of one tape: both rise with the checkpoint."""
    progress = step_index / (len(STEPS) - 1)
    start, end = CONDITIONS[condition]
    share = start + (end - start) * progress
    speed = 1.0 + 0.1 * (seed - 2.5)  # seeds learn a little faster or slower
    skill = 0.25 + 0.75 * min(1.0, progress * speed)
    return round(skill, 4), round(share, 4)


def write_demo_sweep(out: Path, scenes: Sequence[Path], quiet: bool = True) -> int:
    """Write every tape of the demo sweep under ``out``; returns the tapes written."""
    from arena_studio.core.scene.model import load_scene
    from arena_studio.core.sim.rollout import run_rollout

    written = 0
    loaded = [load_scene(p) for p in scenes]
    for scene in loaded:
        for c, condition in enumerate(CONDITIONS):
            for seed in SEEDS:
                folder = out / (condition if len(loaded) == 1 else f"{scene.name}/{condition}")
                folder = folder / f"seed{seed}"
                folder.mkdir(parents=True, exist_ok=True)
                for i, step in enumerate(STEPS):
                    skill, share = knobs(condition, seed, i)
                    rollout_seed = seed * 1000 + c * 100 + i  # distinct episodes everywhere
                    run_rollout(
                        scene,
                        folder / f"step{step}.tape",
                        episodes=EPISODES,
                        seed=rollout_seed,
                        mode="shared",
                        dt=DT,
                        par_limit=PAR_LIMIT,
                        skill=skill,
                        shared_share=share,
                        metadata={
                            "condition": condition,
                            "seed": seed,
                            "step": step,
                            "rollout_seed": rollout_seed,
                        },
                    )
                    written += 1
                    if not quiet:
                        print(f"{folder / f'step{step}.tape'}", file=sys.stderr)
    return written


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="write the demo sweep of tapes")
    parser.add_argument("out", help="folder to write (created)")
    parser.add_argument("scenes", nargs="*", default=["scenes/parking-level.scene.json"])
    parser.add_argument("--verbose", action="store_true")
    args = parser.parse_args(argv)
    n = write_demo_sweep(Path(args.out), [Path(s) for s in args.scenes], quiet=not args.verbose)
    print(f"{n} tapes written under {args.out}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())


__all__ = [
    "CONDITIONS",
    "DT",
    "EPISODES",
    "PAR_LIMIT",
    "SEEDS",
    "STEPS",
    "knobs",
    "main",
    "write_demo_sweep",
]
