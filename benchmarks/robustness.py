"""Trust on imperfect bench sweeps: how often each value is right, flagged, refused or wrong.

Run: ``python benchmarks/robustness.py`` (20 seeds per case, well under 2 minutes on one
core) or ``--seeds N``; ``--cases a,b`` runs only those cases. Prints Markdown.

Every case of ``tests/imperfect.py`` (a seeded, invented sweep with one bench imperfection,
its truth from handbook relations) is built for seeds 0..N-1, fitted with
``fit_sweep(sweep, setup, topology="auto")`` and judged by ``tests/verdicts.py`` as the
tests judge it: "right" within 4 of its own standard errors of the truth; "flagged" when
the value is marked doubtful and the fit carries a warning; "n/d" not determined;
"refused" a FitError where the case allows one, "refused wrongly" where it does not (or
with a message that names the wrong thing); else "confidently wrong", the failure the
robustness work removes. Per case and quantity the table gives the truth, the median
|z| = |value - truth| / stderr over the seeds that returned a value, and the share of
each outcome among the case's runs (a run that refused has no values, and the topology
chosen may not report every quantity, so a row need not sum to 100); the last line pools
every verdict. Rows "(fit)" are about the fit as a whole (a refusal), "glitch dropped"
and "peak point kept" about the outlier step. A first table gives per case the share of
runs refused, with a warning, with a value marked doubtful, and with every verdict
acceptable (for the clean control, "warned" is the false-alarm rate).
"""

from __future__ import annotations

import argparse
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import math  # noqa: E402
import platform  # noqa: E402
import statistics  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from collections import Counter  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from fitkit.errors import FitkitError  # noqa: E402
from fitkit.result import QUANTITIES  # noqa: E402
from fitkit.units import format_quantity  # noqa: E402
from tests.imperfect import CASE_NAMES  # noqa: E402
from tests.verdicts import OUTCOMES, WRONG, run_case  # noqa: E402

SHORT = {
    "right": "right",
    "flagged": "flagged",
    "not determined": "n/d",
    "refused": "refused",
    "refused wrongly": "refused wrongly",
    "confidently wrong": "WRONG",
}


def run(cases: list, seeds: int) -> tuple:
    """Every verdict of every case and seed, per case a count of how its runs went, and
    the worst wrong verdict per case."""
    verdicts, runs, worst = [], {}, {}
    for name in cases:
        runs[name] = Counter()
        for seed in range(seeds):
            _, fit, judged = run_case(name, seed)
            verdicts += judged
            runs[name].update(_how_it_went(fit, judged))
            for v in judged:
                if v.outcome == WRONG and v.z > getattr(worst.get(name), "z", -1.0):
                    worst[name] = v
    return verdicts, runs, worst


def _how_it_went(fit, judged) -> list:
    """Labels of one run: refused, warned, doubted (a value marked), all acceptable."""
    if isinstance(fit, FitkitError):
        labels = ["refused"]
    else:
        labels = ["warned"] if fit.stats.warnings else []
        if any(getattr(q, "doubtful", "") for q in fit.quantities.values()):
            labels.append("doubted")
    return labels + (["acceptable"] if all(v.acceptable for v in judged) else [])


def run_table(runs: dict, seeds: int) -> list:
    """Markdown rows, one per case: how its runs went (the clean control's "warned" share
    is the false-alarm rate)."""
    labels = ("refused", "warned", "doubted", "acceptable")
    lines = ["| case | " + " | ".join(f"{x} %" for x in labels) + " |"]
    lines.append("|---|" + "---|" * len(labels))
    for name, counts in runs.items():
        shares = " | ".join(f"{100.0 * counts[x] / seeds:.0f}" for x in labels)
        lines.append(f"| {name} | {shares} |")
    return lines


def _truth_text(quantity: str, truth) -> str:
    if truth is None:
        return "n/d" if quantity in QUANTITIES else "-"
    unit = QUANTITIES[quantity][0] if quantity in QUANTITIES else "Hz"
    return format_quantity(truth, unit)


def _share(counts: Counter, outcome: str, total: int) -> str:
    n = counts.get(outcome, 0)
    return f"{100.0 * n / total:.0f}" if n else "."


def table(verdicts: list, seeds: int) -> list:
    """Markdown rows, one per case and quantity (shares of the case's runs: a run that
    refused has no values, and a topology may not report every quantity), then the
    pooled line (shares of all verdicts)."""
    head = "| case | quantity | truth | median abs z | " + " | ".join(
        f"{SHORT[o]} %" for o in OUTCOMES
    )
    lines = [head + " |", "|" + "---|" * (4 + len(OUTCOMES))]
    groups = {}
    for v in verdicts:
        groups.setdefault((v.case, v.quantity), []).append(v)
    for (case, quantity), group in groups.items():
        zs = [abs(v.z) for v in group if math.isfinite(v.z)]
        median = f"{statistics.median(zs):.1f}" if zs else "-"
        counts = Counter(v.outcome for v in group)
        shares = " | ".join(_share(counts, o, seeds) for o in OUTCOMES)
        truth = _truth_text(quantity, group[0].truth)
        lines.append(f"| {case} | {quantity} | {truth} | {median} | {shares} |")
    counts = Counter(v.outcome for v in verdicts)
    shares = " | ".join(_share(counts, o, len(verdicts)) for o in OUTCOMES)
    lines.append(f"| **pooled** | {len(verdicts)} verdicts | | | {shares} |")
    return lines


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=20, help="Seeds per case (default 20).")
    parser.add_argument("--cases", default="", help="Comma-separated case names (default all).")
    args = parser.parse_args()
    if args.seeds < 1:
        parser.error(f"--seeds must be 1 or more, not {args.seeds}")
    cases = [c.strip() for c in args.cases.split(",") if c.strip()] or list(CASE_NAMES)
    unknown = sorted(set(cases) - set(CASE_NAMES))
    if unknown:
        parser.error(f"unknown case(s) {', '.join(unknown)}; known: {', '.join(CASE_NAMES)}")
    began = time.perf_counter()
    verdicts, runs, worst = run(cases, args.seeds)
    seconds = time.perf_counter() - began
    command = f"python benchmarks/robustness.py --seeds {args.seeds}"
    if args.cases:
        command += f" --cases {args.cases}"
    print("# Robustness: imperfect sweeps\n")
    print(f"Command: `{command}` ({seconds:.0f} s wall, one process)\n")
    print(
        f"Machine: {os.cpu_count()} cores, Python {platform.python_version()}, "
        f"numpy {np.__version__}\n"
    )
    print("## Per case: how the runs went\n")
    print("\n".join(run_table(runs, args.seeds)))
    print("\n## Per case and quantity\n")
    print("\n".join(table(verdicts, args.seeds)))
    acceptable = sum(v.acceptable for v in verdicts)
    print(
        f"\nAcceptable: {acceptable} of {len(verdicts)} verdicts "
        f"({100.0 * acceptable / max(len(verdicts), 1):.1f} %); confidently wrong: "
        f"{sum(v.outcome == WRONG for v in verdicts)}\n"
    )
    if worst:
        print("## Worst confidently wrong value per case\n")
        for name in cases:
            if name in worst:
                print(f"- {worst[name].describe()}")


if __name__ == "__main__":
    main()
