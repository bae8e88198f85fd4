"""Trajectory CSV files: a `t` column and one `q_<joint>` column per joint, optional
`qd_<joint>` and `qdd_<joint>` columns. Errors name the file, the column and the row."""
import csv
import io
from dataclasses import dataclass

import numpy as np

from .formats import read_text


@dataclass(frozen=True)
class Trajectory:
    t: np.ndarray            # (N,)
    q: np.ndarray            # (N, dof)
    qd: np.ndarray | None    # (N, dof) or None when the file has no qd_ columns
    qdd: np.ndarray | None


def _column_block(header, rows, prefix, names, path, required):
    missing = [f"{prefix}{n}" for n in names if f"{prefix}{n}" not in header]
    if missing and (required or len(missing) < len(names)):
        raise ValueError(f"{path}: missing column(s) {', '.join(missing)}")
    if missing:
        return None
    idx = [header.index(f"{prefix}{n}") for n in names]
    return rows[:, idx]


def read_csv_rows(path):
    """Header and the non-blank data rows of a UTF-8 CSV file, each row with its line
    number: (header, [(line, cells), ...]). Located ValueError for unreadable files,
    an empty file and repeated column names."""
    path = str(path)
    reader = csv.reader(io.StringIO(read_text(path, error=ValueError), newline=""))
    try:
        header = [h.strip() for h in next(reader)]
        lines = [(n, r) for n, r in enumerate(reader, start=2) if r and any(c.strip() for c in r)]
    except StopIteration:
        raise ValueError(f"{path}: empty file") from None
    except csv.Error as exc:      # e.g. a cell over the csv module's field size limit
        raise ValueError(f"{path}: line {reader.line_num}: not readable as CSV ({exc})") from None
    for j, name in enumerate(header):
        if name and name in header[:j]:
            raise ValueError(f"{path}: column '{name}' appears more than once (columns "
                             f"{header.index(name) + 1} and {j + 1})")
    return header, lines


def read_trajectory(path, joint_names):
    """Read a trajectory CSV for a robot with these joint names (in order)."""
    path = str(path)
    header, lines = read_csv_rows(path)
    body = [r for _, r in lines]
    if "t" not in header:
        raise ValueError(f"{path}: missing column 't'")
    if len(body) < 2:
        raise ValueError(f"{path}: needs at least 2 rows of samples, found {len(body)}")
    rows = np.empty((len(body), len(header)))
    for i, r in enumerate(body):
        if len(r) != len(header):
            raise ValueError(f"{path}: row {i + 2} has {len(r)} fields, header has {len(header)}")
        for j, cell in enumerate(r):
            try:
                rows[i, j] = float(cell)
            except ValueError:
                raise ValueError(f"{path}: row {i + 2}, column '{header[j]}': "
                                 f"not a number: {cell!r}") from None
    bad = np.argwhere(~np.isfinite(rows))
    if len(bad):
        i, j = bad[0]
        raise ValueError(f"{path}: row {i + 2}, column '{header[j]}': value {rows[i, j]} is not finite")
    t = rows[:, header.index("t")]
    steps = np.diff(t)
    if np.any(steps <= 0):
        i = int(np.argmax(steps <= 0))
        raise ValueError(f"{path}: row {i + 3}: time {t[i + 1]} does not increase "
                         f"(previous {t[i]})")
    q = _column_block(header, rows, "q_", joint_names, path, required=True)
    qd = _column_block(header, rows, "qd_", joint_names, path, required=False)
    qdd = _column_block(header, rows, "qdd_", joint_names, path, required=False)
    return Trajectory(t, q, qd, qdd)


def write_trajectory(path, t, joint_names, q, qd=None, qdd=None, extra=None):
    """Write t, q_*, and optionally qd_*, qdd_* and extra named columns ({name: (N,) array})."""
    cols = {"t": np.asarray(t)}
    for prefix, arr in (("q_", q), ("qd_", qd), ("qdd_", qdd)):
        if arr is not None:
            arr = np.asarray(arr)
            for j, n in enumerate(joint_names):
                cols[f"{prefix}{n}"] = arr[:, j]
    for name, arr in (extra or {}).items():
        cols[name] = np.asarray(arr)
    data = np.column_stack(list(cols.values()))
    with open(path, "w", newline="") as fh:
        fh.write(",".join(cols) + "\n")
        for row in data:
            fh.write(",".join(f"{v:.12g}" for v in row) + "\n")
