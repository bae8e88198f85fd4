"""Print the coverage summary of `make coverage`: C lines and branches (lcov .info) and
Python lines (coverage.py JSON), with what is not covered, file by file.

    python bench/coverage_report.py --lcov build/coverage/c.info --py build/coverage/py.json
        [--out build/coverage/summary.json]
Goals (reported, not asserted): >= 95% of C lines, >= 90% of C branches, >= 90% of
Python lines.
"""
from __future__ import annotations

import argparse
import json
import os
import sys

GOALS = {"c_lines": 95.0, "c_branches": 90.0, "py_lines": 90.0}


def _ranges(nums):
    """[1, 2, 3, 7] -> '1-3, 7'."""
    nums = sorted(nums)
    out, start, prev = [], None, None
    for n in nums:
        if start is None:
            start = prev = n
        elif n == prev + 1:
            prev = n
        else:
            out.append(f"{start}-{prev}" if prev != start else f"{start}")
            start = prev = n
    if start is not None:
        out.append(f"{start}-{prev}" if prev != start else f"{start}")
    return ", ".join(out)


def read_lcov(path, root):
    files = {}
    cur = None
    with open(path, encoding="utf-8") as fh:
        for line in fh:
            line = line.strip()
            if line.startswith("SF:"):
                cur = os.path.relpath(line[3:], root)
                files[cur] = {"lines": {}, "branches": {}}
            elif line.startswith("DA:") and cur:
                ln, hits = line[3:].split(",")[:2]
                files[cur]["lines"][int(ln)] = max(files[cur]["lines"].get(int(ln), 0), int(hits))
            elif line.startswith("BRDA:") and cur:
                ln, block, branch, taken = line[5:].split(",")
                key = (int(ln), block, branch)
                t = 0 if taken == "-" else int(taken)
                files[cur]["branches"][key] = max(files[cur]["branches"].get(key, 0), t)
            elif line == "end_of_record":
                cur = None
    return files


def c_summary(files):
    rows, tl, hl, tb, hb = [], 0, 0, 0, 0
    for name, f in sorted(files.items()):
        lines = f["lines"]
        br = f["branches"]
        missing = [ln for ln, h in lines.items() if h == 0]
        br_missing = sorted({ln for (ln, _, _), t in br.items() if t == 0})
        tl += len(lines)
        hl += len(lines) - len(missing)
        tb += len(br)
        hb += sum(1 for t in br.values() if t > 0)
        rows.append({"file": name, "lines": len(lines), "lines_hit": len(lines) - len(missing),
                     "branches": len(br), "branches_hit": sum(1 for t in br.values() if t > 0),
                     "missing_lines": _ranges(missing), "lines_with_untaken_branches": _ranges(br_missing)})
    return {"lines_pct": 100.0 * hl / tl if tl else None,
            "branches_pct": 100.0 * hb / tb if tb else None, "files": rows}


def py_summary(path):
    with open(path, encoding="utf-8") as fh:
        data = json.load(fh)
    rows = []
    for name, f in sorted(data["files"].items()):
        s = f["summary"]
        rows.append({"file": name, "statements": s["num_statements"],
                     "covered": s["covered_lines"], "pct": s["percent_covered"],
                     "missing_lines": _ranges(f.get("missing_lines", []))})
    return {"lines_pct": data["totals"]["percent_covered"], "files": rows}


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--lcov")
    p.add_argument("--py")
    p.add_argument("--root", default=os.getcwd())
    p.add_argument("--out")
    args = p.parse_args(argv)
    out = {"goals": GOALS}
    if args.lcov and os.path.exists(args.lcov):
        c = c_summary(read_lcov(args.lcov, args.root))
        out["c"] = c
        print(f"C (csrc/): lines {c['lines_pct']:.1f}% (goal {GOALS['c_lines']}), branches "
              f"{c['branches_pct']:.1f}% (goal {GOALS['c_branches']})")
        for r in c["files"]:
            print(f"  {r['file']:28s} lines {r['lines_hit']}/{r['lines']}  branches "
                  f"{r['branches_hit']}/{r['branches']}")
            if r["missing_lines"]:
                print(f"      not run: {r['missing_lines']}")
            if r["lines_with_untaken_branches"]:
                print(f"      untaken branches on: {r['lines_with_untaken_branches']}")
    if args.py and os.path.exists(args.py):
        py = py_summary(args.py)
        out["python"] = py
        print(f"Python (ffwd/): lines {py['lines_pct']:.1f}% (goal {GOALS['py_lines']})")
        for r in py["files"]:
            if r["pct"] < 100.0:
                print(f"  {r['file']:40s} {r['pct']:5.1f}%  not run: {r['missing_lines']}")
    if args.out:
        with open(args.out, "w", encoding="utf-8") as fh:
            json.dump(out, fh, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
