"""Plausibility of the fronts on the real runs in tests/real_data (issue targets).

For every real run committed under ``tests/real_data`` that the kit can read,
the plausibility report (:mod:`kit.science.plausibility`) is taken and pooled
over the runs: tropical, below-ground, edge and short-piece shares of line
length, and the lifts of trough, cyclonic vorticity and cyclonic shear over a
baseline of random points with the same theta-w gradient. The real runs are
regression cases, never truth. Run: ``python -m benchmarks --only plausibility``.
"""

from pathlib import Path

import kit
from kit.errors import InputError
from kit.products.fronts import plausibility

ROOT = Path(__file__).resolve().parents[1]
REAL = ROOT / "tests" / "real_data"

#: issue 14 targets: (name, pooled key, target text, test)
TARGETS = [
    ("tropical share of line length", "tropical_share", "<= 0.05", lambda v: v <= 0.05),
    ("below-ground share of line length", "below_ground_share", "<= 0.01", lambda v: v <= 0.01),
    ("share in pieces < 3 grid lengths", "short_share", "<= 0.20", lambda v: v <= 0.20),
    ("trough lift", "trough_lift", ">= 0.6", lambda v: v >= 0.6),
    ("cyclonic-vorticity lift", "vorticity_lift", ">= 0.3", lambda v: v >= 0.3),
    ("cyclonic-shear lift", "shear_lift", "(reported)", lambda v: True),
]


def real_analyses():
    """(name, Analysis) of every real run the kit reads; unreadable ones are listed."""
    out, skipped = [], []
    for path in sorted(REAL.glob("*.nc")):
        try:
            ds = kit.open_run(path)
        except InputError as err:
            skipped.append((path.name, str(err)))
            continue
        out.append((path.name, kit.analyse(ds)))
    return out, skipped


def run():
    """Return the figures (name, value, unit, target, met)."""
    analyses, skipped = real_analyses()
    rows = []
    for name, a in analyses:
        rep = plausibility(a)
        p = rep.attrs["pooled"]
        rows.append(dict(name=f"{name}: fronts per valid time (and member)",
                         value=p["n_fronts"] / max(1, len(rep)), unit="1",
                         target="(reported)", met=True))
        for label, key, target, ok in TARGETS:
            rows.append(dict(name=f"{name}: {label}", value=p[key], unit="1",
                             target=target, met=bool(ok(p[key]))))
    pooled = plausibility([a for _, a in analyses]).attrs["pooled"] if analyses else {}
    for label, key, target, ok in TARGETS:
        if pooled:
            rows.append(dict(name=f"pooled over real runs: {label}", value=pooled[key],
                             unit="1", target=target, met=bool(ok(pooled[key]))))
    for name, why in skipped:
        rows.append(dict(name=f"{name}: not analysed ({why[:80]})", value=float("nan"),
                         unit="", target="(reported)", met=True))
    return rows


if __name__ == "__main__":
    for row in run():
        print(row)
