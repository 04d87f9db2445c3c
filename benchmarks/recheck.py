"""Re-check many varied bearings with full traces and review; print the rate and memory.

    .venv/bin/python benchmarks/recheck.py [--count 10000] [--seed 7]

Each bearing: the as-built values are merged into the design, the as-built re-check runs
with its full trace, and the review compares it with the design's stored result (the
server keeps the design result, so the design check is timed separately). Invented,
seeded inputs; figures are for this machine only.
"""

from __future__ import annotations

import argparse
import random
import resource
import statistics
import sys
import time
import tracemalloc
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from sitecheck.bearing import (  # noqa: E402
    ACROSS,
    IN_LINE,
    Beam,
    BearingInput,
    Load,
    Masonry,
    Padstone,
    Wall,
    bs5628,
    check_bearing,
    ec6_uk_na,
)
from sitecheck.bearing.review import Checklist, Measurements, as_built_input, review  # noqa: E402


def varied_bearings(count: int, seed: int):
    rng = random.Random(seed)
    out = []
    for _ in range(count):
        ec6 = rng.random() < 0.7
        across = rng.random() < 0.7
        t = rng.choice((100.0, 140.0, 215.0))
        pad = rng.random() < 0.75
        b_f = rng.choice((89.0, 102.0, 133.0, 146.0))
        if not across and not pad:
            b_f = min(b_f, t)
        l_b = (
            rng.choice((100.0, 125.0, 150.0))
            if not across
            else min(t, rng.choice((90.0, 100.0, 150.0, 215.0)))
        )
        padstone = None
        if pad:
            width = t
            length = rng.choice((215.0, 440.0, 600.0))
            length = max(length, b_f) if across else max(length, l_b)
            padstone = Padstone(
                length=length,
                width=width,
                depth=rng.choice((100.0, 140.0, 215.0)),
                concrete=rng.choice(("C20/25", "C25/30", "C30/37")),
            )
        if ec6:
            masonry = Masonry(
                material=rng.choice(("clay", "aggregate concrete", "calcium silicate")),
                group=1 if rng.random() < 0.8 else 2,
                unit_strength=rng.choice((3.6, 7.3, 10.4, 20.0)),
                unit_height=215.0,
                unit_width=t,
                mortar=rng.choice(("M4", "M6")),
            )
        else:
            masonry = Masonry(
                material="clay",
                unit_strength=rng.choice((10.0, 20.0, 27.5)),
                unit_height=65.0,
                unit_width=102.5,
                mortar="M4",
            )
        design = BearingInput(
            load=Load(reaction=rng.uniform(5e3, 120e3), wall_load=rng.uniform(0, 30)),
            beam=Beam(
                flange_width=b_f, bearing_length=l_b, orientation=ACROSS if across else IN_LINE
            ),
            wall=Wall(
                thickness=t,
                height_to_bearing=rng.uniform(2100, 3000),
                a1=rng.choice((None, 0.0, 150.0, 600.0)),
            ),
            masonry=masonry,
            padstone=padstone,
            bearing_type=1 if rng.random() < 0.8 else 3,
        )
        m = Measurements(
            bearing_length=max(60.0, l_b - rng.choice((0.0, 5.0, 30.0))),
            padstone_present=pad,
            padstone_length=None
            if not pad
            else max(padstone.length - rng.choice((0.0, 20.0, 110.0)), b_f if across else l_b),
            padstone_width=None if not pad else padstone.width,
            padstone_depth=None if not pad else padstone.depth,
            wall_thickness=t,
            masonry_group=masonry.group,
            a1=design.wall.a1,
        )
        checklist = Checklist(
            bedded=rng.random() < 0.95,
            packing=rng.choice((0.0, 5.0, 15.0)),
            cracks=rng.random() < 0.05,
            level=True,
        )
        out.append((design, m, checklist, ec6_uk_na() if ec6 else bs5628()))
    return out


def _timed(work, repeat: int) -> tuple[float, float]:
    """Median wall and CPU seconds of ``work()`` over ``repeat`` runs. CPU time is the
    steadier figure on a shared 2-core machine: another process's load stretches the wall
    clock but not this process's own time on its core."""
    walls, cpus = [], []
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        work()
        walls.append(time.perf_counter() - w0)
        cpus.append(time.process_time() - c0)
    return statistics.median(walls), statistics.median(cpus)


def main() -> int:
    parser = argparse.ArgumentParser()
    parser.add_argument("--count", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--repeat", type=int, default=3, help="runs per figure (median)")
    args = parser.parse_args()
    cases = varied_bearings(args.count, args.seed)
    bases = {b.name: b for *_, b in cases}
    cases = [(d, m, c, bases[b.name]) for d, m, c, b in cases]  # one basis object per name
    n = len(cases)

    def design_checks():
        for d, _, _, b in cases:
            check_bearing(d, b)

    w0 = time.perf_counter()
    designs = [check_bearing(d, b) for d, _, _, b in cases]
    t_held = time.perf_counter() - w0

    counts = {"reasons": 0, "failing": 0}

    def recheck_and_review():
        reasons_total = failing = 0
        for (design, m, checklist, basis), design_result in zip(cases, designs, strict=True):
            built = as_built_input(design, m)
            result = check_bearing(built, basis)
            reasons = review(design, design_result, m, checklist, built, result, basis)
            reasons_total += len(reasons)
            failing += not result.passed
        counts.update(reasons=reasons_total, failing=failing)

    t_design, c_design = _timed(design_checks, args.repeat)
    t_recheck, c_recheck = _timed(recheck_and_review, args.repeat)

    steps = sum(len(c.steps) for r in designs[:200] for c in r.checks) / 200
    tracemalloc.start()
    for (design, m, checklist, basis), design_result in zip(
        cases[:2000], designs[:2000], strict=True
    ):
        built = as_built_input(design, m)
        review(design, design_result, m, checklist, built, check_bearing(built, basis), basis)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024

    def rate(wall: float, cpu: float) -> str:
        return f"{n / wall:,.0f} bearings/s wall ({wall:.2f} s), {n / cpu:,.0f}/s CPU"

    print(f"bearings:                      {n} (median of {args.repeat} runs)")
    print(f"as-built re-check + review:    {rate(t_recheck, c_recheck)}")
    print(f"design checks:                 {rate(t_design, c_design)}")
    # Holding every result alive makes Python's cycle collector walk a growing heap; a
    # server re-checks one record at a time, so this is shown apart, not as the rate.
    print(f"design checks, all {n} results held: {n / t_held:,.0f} bearings/s")
    print(f"mean trace steps per bearing:  {steps:.0f}")
    print(
        f"review reasons raised:         {counts['reasons']} "
        f"({counts['failing']} bearings failing as built)"
    )
    print(f"peak traced memory during 2000 re-checks (results let go): {peak / 1e3:.0f} kB")
    print(f"peak process RSS (all {n} design results held): {rss_mb:.0f} MB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
