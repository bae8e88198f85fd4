"""Instruction counts per call from valgrind's callgrind (repeatable on noisy machines).

Collection is switched on only inside the named function (callees included, e.g. the
core's own sin/cos, or libm's for the symbolic code), while ffwd-bench --calls-only runs
the calls back to back over its pool of random states.
"""
from __future__ import annotations

import glob
import os
import re
import shutil
import subprocess
import tempfile

_TOTALS = re.compile(r"^(?:totals|summary):\s+(\d+)", re.M)


def available():
    return shutil.which("valgrind") is not None


def _run(cmd):
    res = subprocess.run(cmd, capture_output=True, text=True)
    if res.returncode != 0:
        raise OSError(f"callgrind run failed ({res.returncode}): {' '.join(cmd)}\n{res.stderr[-2000:]}")


def per_call(program, args, symbol, calls):
    """Mean instructions per call of `symbol` while `program args` makes `calls` calls."""
    with tempfile.TemporaryDirectory(prefix="ffwd-cg-") as tmp:
        out = os.path.join(tmp, "cg.out")
        _run(["valgrind", "--tool=callgrind", f"--callgrind-out-file={out}",
              "--collect-atstart=no", f"--toggle-collect={symbol}", program] + list(args))
        with open(out, encoding="utf-8", errors="replace") as fh:
            m = _TOTALS.search(fh.read())
        if not m:
            raise OSError(f"no totals in callgrind output of {program}")
        return int(m.group(1)) / calls


def each_call(program, args, symbol):
    """Instruction count of every single call of `symbol` (one callgrind dump per call)."""
    with tempfile.TemporaryDirectory(prefix="ffwd-cg-") as tmp:
        out = os.path.join(tmp, "cg.out")
        _run(["valgrind", "--tool=callgrind", f"--callgrind-out-file={out}",
              "--collect-atstart=no", f"--toggle-collect={symbol}", f"--dump-after={symbol}",
              program] + list(args))
        counts = []
        for path in glob.glob(out + ".*"):
            with open(path, encoding="utf-8", errors="replace") as fh:
                m = _TOTALS.search(fh.read())
            if m and int(m.group(1)) > 0:
                counts.append(int(m.group(1)))
        return counts


def hot_spots(program, args, symbol, top=12):
    """The lines of callgrind_annotate for `symbol`'s callees: where the instructions go."""
    if shutil.which("callgrind_annotate") is None:
        return []
    with tempfile.TemporaryDirectory(prefix="ffwd-cg-") as tmp:
        out = os.path.join(tmp, "cg.out")
        _run(["valgrind", "--tool=callgrind", f"--callgrind-out-file={out}",
              "--collect-atstart=no", f"--toggle-collect={symbol}", program] + list(args))
        res = subprocess.run(["callgrind_annotate", "--inclusive=no", out],
                             capture_output=True, text=True)
    rows = []
    for line in res.stdout.splitlines():
        m = re.match(r"^\s*([\d,]+)\s+\(\s*([\d.]+)%\)\s+(\S.*)$", line)
        if m and ":" in m.group(3) and not m.group(3).startswith("PROGRAM"):
            rows.append({"instructions": int(m.group(1).replace(",", "")),
                         "percent": float(m.group(2)), "where": m.group(3).strip()})
    return rows[:top]
