"""Largest relative changes between two summary.json files (e.g. of two versions of diagap).

Run on purpose (not collected by pytest)::

    python tests/bench/compare_summaries.py old/summary.json new/summary.json [--top 20]

Every number of the two summaries is paired by its path (``section.key[index]``; timings and
the design echo left out). Prints the largest relative changes |new − old|/|old|, each beside
the relative error estimate the summary states for it (``uncertainty``, where it has one) and
their ratio, then the largest change overall and the largest share of a stated estimate.
"""
from __future__ import annotations

import argparse
import json
import math

SKIP = ("timings_s", "design", "schema_version")


def leaves(obj, path=""):
    """(path, value) of every number in a JSON tree."""
    if isinstance(obj, dict):
        for k, v in obj.items():
            if not path and k in SKIP:
                continue
            yield from leaves(v, f"{path}.{k}" if path else k)
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from leaves(v, f"{path}[{i}]")
    elif isinstance(obj, (int, float)) and not isinstance(obj, bool):
        yield path, float(obj)


def _estimate(unc: dict, path: str):
    key = path.split("[")[0]
    if key.startswith("uncertainty."):
        return None
    return unc.get(key)


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("old")
    ap.add_argument("new")
    ap.add_argument("--top", type=int, default=20)
    args = ap.parse_args(argv)
    old, new = (json.load(open(p)) for p in (args.old, args.new))
    a, b = dict(leaves(old)), dict(leaves(new))
    unc = old.get("uncertainty", {})
    rows = []
    for path in sorted(set(a) & set(b)):
        x, y = a[path], b[path]
        if not (math.isfinite(x) and math.isfinite(y)):
            continue
        rel = abs(y - x) / abs(x) if x != 0 else (0.0 if y == 0 else math.inf)
        est = _estimate(unc, path)
        rows.append((rel, path, x, y, est))
    rows.sort(reverse=True)
    print(f"{len(rows)} numbers compared; only in old: {len(set(a) - set(b))}, "
          f"only in new: {len(set(b) - set(a))}")
    print(f"{'relative change':>15}  {'estimate':>9}  {'share':>7}  path")
    for rel, path, x, y, est in rows[: args.top]:
        share = f"{rel / est:7.1e}" if est else "      -"
        print(f"{rel:15.3e}  {est if est else float('nan'):9.2e}  {share}  {path}")
    shares = [(r / e, p) for r, p, _, _, e in rows if e]
    values = [r for r in rows if not r[1].startswith("uncertainty.")]
    if values:
        print(f"largest change of a value: {values[0][0]:.3e} ({values[0][1]})")
    if shares:
        s, p = max(shares)
        print(f"largest share of a stated error estimate: {s:.3e} ({p})")


if __name__ == "__main__":
    main()
