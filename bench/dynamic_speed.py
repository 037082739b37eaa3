"""Time `auditor probe` on five expressions x 1,000 samples against bare mpmath evaluating the
same expressions on the same inputs at the precision the tool settled on (target ratio <= 3).

Three figures per expression, all on the same 1,000 inputs:
  core   the float run and the reference run with digits lost (no condition numbers)
  +cond  plus the condition number (gradients in the same reference pass where every operation
         has a derivative rule, else one extra reference run per input variable)
  probe  the whole `probe`: the above, the static rules on the expression, and the rewrite
         measured and verified on the same inputs
Times are CPU seconds of this process (time.process_time), the best of REPEATS runs, for both
sides alike: the machine is shared, and CPU time is less disturbed by other load than wall time.
Run from the repository root: python bench/dynamic_speed.py
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

import mpmath

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from auditor.numerics.run import measure_points  # noqa: E402
from auditor.numerics.unit import Unit, compile_shadow  # noqa: E402
from auditor.probe import parse_expression, prelude_module, run_probe  # noqa: E402

SAMPLES = 1000
REPEATS = 5  #: each figure is the best of this many runs (the machine may be shared)
#: (expression as probed, input box, the same expression written directly with mpmath)
CASES = [
    ("sqrt(x + 1) - sqrt(x)", ["x=1..1e15"], lambda x: mpmath.sqrt(x + 1) - mpmath.sqrt(x)),
    ("exp(x) - 1", ["x=-1e-3..1e-3"], lambda x: mpmath.exp(x) - 1),
    ("log(1 + x)", ["x=1e-15..1e-1"], lambda x: mpmath.log(1 + x)),
    ("1 - cos(x)", ["x=1e-8..1"], lambda x: 1 - mpmath.cos(x)),
    ("x * x - y * y", ["x=1..2", "y=1..2"], lambda x, y: x * x - y * y),
]


def best(run) -> float:
    times = []
    for _ in range(REPEATS):
        started = time.process_time()
        run()
        times.append(time.process_time() - started)
    return min(times)


def bare(fn, points, bits: int) -> float:
    """Seconds for plain mpmath to evaluate fn once per point at `bits` (inputs converted too)."""

    def run() -> None:
        with mpmath.workprec(bits):
            for point in points:
                fn(*(mpmath.mpf(v) for v in point.values()))

    return best(run)


def timed_core(text: str, names: list[str], points, conditions: bool) -> float:
    shadow = compile_shadow(Unit(parse_expression(text), names, None), prelude_module())
    shadow.conditions = conditions

    def run() -> None:
        samples, _, note = measure_points(shadow, points, seconds=600.0)
        assert len(samples) == len(points), note

    return best(run)


def main() -> int:
    totals = [0.0, 0.0, 0.0, 0.0]
    print(f"{'expression':24} {'bits':>4} {'mpmath s':>8} {'core':>12} {'+cond':>12} {'probe':>12}")
    for text, box, fn in CASES:
        run_probe(text, box, [], 8, 0)  # warm up imports and caches
        result = run_probe(text, box, [], SAMPLES, 0)
        probe = best(lambda: run_probe(text, box, [], SAMPLES, 0))
        points = [s.inputs for s in result.samples]
        names = sorted(points[0])
        core = timed_core(text, names, points, conditions=False)
        cond = timed_core(text, names, points, conditions=True)
        mp_time = bare(fn, points, result.bits)
        for i, v in enumerate((mp_time, core, cond, probe)):
            totals[i] += v
        print(f"{text:24} {result.bits:4d} {mp_time:8.3f} " + " ".join(f"{v:6.3f} x{v / mp_time:4.1f}" for v in (core, cond, probe)))
    mp_time = totals[0]
    print(f"{'all five':24} {'':4} {mp_time:8.3f} " + " ".join(f"{v:6.3f} x{v / mp_time:4.1f}" for v in totals[1:]))
    print(f"probe / bare mpmath, all five: {totals[3] / mp_time:.2f} (target <= 3)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
