"""What a user waits for, before and after a change: the commands timed at two revisions.

Run from the repository root::

    python3 benchmarks/before_after.py --before REV [--after WORKTREE] [--repeat 2]

``--before`` is any git revision (for the reshaping of the package into one background
engine: the last commit before it, ``c4dfb84``); ``--after`` the checkout to compare (default:
this one). The revision is checked out into a temporary git worktree. Each command below runs
with each revision's own copy of the example configuration of the same name (spellings of keys
may differ between revisions), first once to compile and cache the kernels, then ``--repeat``
times; the best wall time of the repeats is kept, and the ratio after / before is printed
(below 1: faster now). Workloads, each end to end through the command line:

* ``efolds examples/quadratic_bounce_efolds.toml``: 2000 contracting-branch draws through
  the bounce (the compiled engine, batched), serial;
* ``compare examples/compare_dynamics.toml``: 100 draws under each of several dynamics;
* ``score examples/powerlaw_planck2018.toml``: one pivot-summary score (start-up dominated);
* ``spectrum examples/bounce_dressed_metric.toml``: background, modes and spectra of a bounce.

The two revisions run one after the other on the same machine; run it on a quiet machine.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

WORKLOADS = (
    ("efolds", "examples/quadratic_bounce_efolds.toml", ["--workers", "1", "--quiet"]),
    ("compare", "examples/compare_dynamics.toml", ["--workers", "1", "--quiet"]),
    ("score", "examples/powerlaw_planck2018.toml", []),
    ("spectrum", "examples/bounce_dressed_metric.toml", ["--quiet"]),
)


def run_once(tree: Path, command: str, config: str, extra: list[str], out: Path) -> float:
    """Wall time of one command in checkout ``tree`` (its own package first on the path)."""
    env = {**os.environ, "PYTHONPATH": str(tree), "OMP_NUM_THREADS": "1"}
    args = [sys.executable, "-m", "bouncelike", command, str(tree / config), *extra]
    if command != "score":
        args += ["--output", str(out)]
    started = time.perf_counter()
    done = subprocess.run(args, cwd=tree, env=env, capture_output=True, text=True)
    seconds = time.perf_counter() - started
    if done.returncode != 0:
        raise RuntimeError(f"{command} failed in {tree}: {done.stderr.strip()[-300:]}")
    return seconds


def best_time(tree: Path, command: str, config: str, extra: list[str], repeat: int) -> float:
    with tempfile.TemporaryDirectory() as tmp:
        run_once(tree, command, config, extra, Path(tmp) / "warm")  # compile, cache
        return min(run_once(tree, command, config, extra, Path(tmp) / f"r{i}")
                   for i in range(repeat))


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--before", required=True, help="git revision to compare against")
    parser.add_argument("--after", default=str(Path(__file__).resolve().parents[1]),
                        help="checkout to time (default: this one)")
    parser.add_argument("--repeat", type=int, default=2)
    args = parser.parse_args()
    after = Path(args.after).resolve()
    before = Path(tempfile.mkdtemp(prefix="bouncelike-before-"))
    shutil.rmtree(before)
    subprocess.run(["git", "worktree", "add", "--detach", str(before), args.before],
                   cwd=after, check=True, capture_output=True)
    try:
        print(f"before: {args.before} ({before}); after: {after}")
        print(f"{'command':<10} {'before s':>9} {'after s':>9} {'after/before':>13}")
        for command, config, extra in WORKLOADS:
            if not (before / config).is_file():
                print(f"{command:<10} skipped: {config} not in {args.before}")
                continue
            t0 = best_time(before, command, config, extra, args.repeat)
            t1 = best_time(after, command, config, extra, args.repeat)
            print(f"{command:<10} {t0:9.2f} {t1:9.2f} {t1 / t0:13.2f}", flush=True)
    finally:
        subprocess.run(["git", "worktree", "remove", "--force", str(before)], cwd=after,
                       capture_output=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
