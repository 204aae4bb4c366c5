"""``plantopt bench sweep``: what warm starts and workers buy on a price sweep.

Runs one line sweep of the demo plant (invented data) four ways: every point
cold, warm-started chains on 1 worker, and on 2 local processes; prints total
solver iterations and wall time. Target (issue 6): warm starts take at most
half the iterations of cold solves. Results of the warm runs must agree
exactly whatever the number of workers (checked and printed).
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path
from typing import Sequence

from plantopt.results import SAFETY_NOTICE

DEMO = Path(__file__).resolve().parents[2] / "flowsheets" / "demo.toml"


def main(argv: Sequence[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="plantopt bench sweep", description=__doc__.splitlines()[0])
    ap.add_argument("--flowsheet", default=str(DEMO))
    ap.add_argument("--vary", default="economics.feeds.FEED_C3=0.80:1.30:50", metavar="PATH=START:STOP:N")
    ap.add_argument("--solver", choices=["sqp", "ipopt"], default="sqp")
    ap.add_argument("--workers", type=int, nargs="+", default=[1, 2])
    args = ap.parse_args(argv)

    from plantopt import load_flowsheet
    from plantopt.studies.sweep import executor_for, run_sweep

    fs = load_flowsheet(args.flowsheet)
    runs = [("cold", 1, False, False)] + [("warm", w, True, False) for w in args.workers] + [("warm+predict", 1, True, True)]
    table = []
    ref = None
    for label, w, warm, predict in runs:
        t = time.perf_counter()
        with executor_for(w) as ex:
            r = run_sweep(fs, vary=[args.vary], solver=args.solver, executor=ex, warm=warm, bisect=False, predict=predict)
        wall = time.perf_counter() - t
        same = ""
        if warm and not predict:
            key = [(row["status"], row.get("objective"), row.get("active_set")) for row in r.rows]
            same = "reference" if ref is None else ("identical" if key == ref else "DIFFERENT")
            ref = ref or key
        table.append((label, w, r.total_iterations, r.n_optimal, len(r.rows), wall, same))
    cold_it, cold_t = table[0][2], table[0][5]
    one_t = next((row[5] for row in table if row[0] == "warm" and row[1] == 1), None)
    print(f"Sweep benchmark: {args.vary} on {Path(args.flowsheet).name} (solver {args.solver})")
    print(f"{'run':<13}{'workers':>8}{'iterations':>12}{'optimal':>10}{'wall s':>9}{'iter/cold':>11}{'speed-up':>10}  results")
    for label, w, it, nopt, n, wall, same in table:
        sp = f"{one_t / wall:.2f}" if (label == "warm" and one_t) else "-"
        print(f"{label:<13}{w:>8}{it:>12}{f'{nopt}/{n}':>10}{wall:>9.1f}{it / max(cold_it, 1):>11.2f}{sp:>10}  {same}")
    warm_it = table[1][2]
    print(f"target: warm <= 0.5 x cold iterations: {'met' if warm_it <= 0.5 * cold_it else 'NOT met'} "
          f"({warm_it} vs {cold_it}); warm wall time {table[1][5] / cold_t:.2f} x cold")
    try:
        import os

        la = os.getloadavg()
        print(f"load average {la[0]:.1f} on {os.cpu_count()} cores during the runs (other work on the machine "
              "distorts the wall times and the speed-up)")
    except (AttributeError, OSError):  # not on every platform
        pass
    print(SAFETY_NOTICE)
    return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
