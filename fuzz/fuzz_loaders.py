"""Fuzz the model loaders and CSV readers with atheris (libFuzzer for Python).

    python fuzz/fuzz_loaders.py TARGET [libFuzzer options] [CORPUS_DIR ...]
    TARGET: toml | dh | urdf | path_csv | log_csv | all
    python fuzz/fuzz_loaders.py --seed-all OUT_DIR     (corpus for `all` from fuzz/corpus)

Each input is written to a file with the target's suffix and read with the loader:
    toml      ffwd.load(*.toml)            (native format, may hold DH rows)
    dh        ffwd.load(*.dh.csv)          (standalone DH table)
    urdf      ffwd.load(*.urdf)            (URDF import)
    path_csv  ffwd.scaling.path.Path.from_csv(*.csv, six_axis)
    log_csv   ffwd.identify.logs.read_log(*.csv, six_axis)
`all` fuzzes the five in one process (one start-up): the first byte picks the reader,
the rest is the file.
The rule (common brief): bad input gives a ValueError (ffwd.ModelError is one) whose
message is one line and names the file; anything else - another exception type, a
multi-line or unlocated message - is a finding and stops the run with the input saved.
Without atheris (pip install atheris), a plain random mutation loop over the corpus runs
instead (--fallback forces it): less clever, same rule.
"""
from __future__ import annotations

import atexit
import os
import random
import shutil
import sys
import tempfile
import time
import warnings

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

SUFFIX = {"toml": ".toml", "dh": ".dh.csv", "urdf": ".urdf", "path_csv": ".csv",
          "log_csv": ".csv"}
TARGETS = list(SUFFIX)
# The input file of every execution lives in memory where /dev/shm exists (an
# execution writes it and the loader reads it back: half of the time of a short input),
# in a folder named after this process; folders of processes that no longer run are
# removed (libFuzzer may end the process without running atexit handlers).
_TMP_BASE = ("/dev/shm" if os.path.isdir("/dev/shm") and os.access("/dev/shm", os.W_OK)
             else tempfile.gettempdir())
_TMP = os.path.join(_TMP_BASE, f"ffwd-fuzz-{os.getpid()}")


def _tidy_tmp():
    """Remove the input folders of fuzz processes that have ended; make ours."""
    for name in os.listdir(_TMP_BASE):
        pid = name[len("ffwd-fuzz-"):]
        if not (name.startswith("ffwd-fuzz-") and pid.isdigit()) or int(pid) == os.getpid():
            continue
        try:
            os.kill(int(pid), 0)
        except ProcessLookupError:
            shutil.rmtree(os.path.join(_TMP_BASE, name), ignore_errors=True)
        except OSError:
            pass
    os.makedirs(_TMP, exist_ok=True)
    atexit.register(shutil.rmtree, _TMP, True)


_STATE = {"known": {}}
# Findings already reported to the owners: a line "TARGET: text" in known_findings.txt
# makes a finding whose message contains the text be counted instead of stopping the
# run (delete the line once the loader is fixed).
KNOWN_FILE = os.path.join(HERE, "known_findings.txt")


def _known(target):
    out = []
    if os.path.exists(KNOWN_FILE):
        with open(KNOWN_FILE, encoding="utf-8") as fh:
            for line in fh:
                line = line.strip()
                if line and not line.startswith("#") and ":" in line:
                    t, text = line.split(":", 1)
                    if t.strip() == target:
                        out.append(text.strip())
    return out


def _is_known(target, message):
    if target == "all":
        target = message.split(":", 1)[0]
    for text in _known(target):
        if text in message:
            _STATE["known"][text] = _STATE["known"].get(text, 0) + 1
            return True
    return False


class Finding(Exception):
    """The loader broke the error rule for this input."""


def _reader(target):
    ffwd = _STATE["ffwd"]
    if target in ("path_csv", "log_csv") and "robot" not in _STATE:
        _STATE["robot"] = ffwd.load(os.path.join(ROOT, "examples", "robots", "six_axis.toml"))
    if target == "path_csv":
        from ffwd.scaling.path import Path
        return lambda p: Path.from_csv(p, _STATE["robot"])
    if target == "log_csv":
        from ffwd.identify.logs import read_log
        return lambda p: read_log(p, _STATE["robot"])
    return ffwd.load


# The modules each target runs. They are imported in _setup, so that under atheris
# (which instruments the modules imported inside instrument_imports) the readers
# themselves report coverage, not only the package's __init__ files (the readers
# import their modules lazily on first use).
MODULES = {
    "toml": ["ffwd.formats.toml", "ffwd.formats.dh", "ffwd.formats.transforms"],
    "dh": ["ffwd.formats.dh", "ffwd.formats.toml", "ffwd.formats.transforms"],
    "urdf": ["ffwd.formats.urdf", "ffwd.formats.toml", "ffwd.formats.dh", "ffwd.formats.transforms"],
    "path_csv": ["ffwd.scaling.path", "ffwd.trajio"],
    "log_csv": ["ffwd.identify.logs", "ffwd.trajio"],
}


def _setup(target):
    import importlib
    import ffwd
    names = TARGETS if target == "all" else [target]
    for t in names:
        for mod in MODULES[t]:
            importlib.import_module(mod)
    # warnings are not findings: ignore them once here instead of per execution
    warnings.simplefilter("ignore")
    _STATE["ffwd"] = ffwd
    _STATE["target"] = target
    _STATE["readers"] = {t: _reader(t) for t in names}
    _tidy_tmp()
    _STATE["paths"] = {t: os.path.join(_TMP, "input" + SUFFIX[t]) for t in names}


def check_one(data):
    """Run the target's reader on `data`; raise Finding when the error rule is broken."""
    target = _STATE["target"]
    if target == "all":
        if not data:
            return
        target, data = TARGETS[data[0] % len(TARGETS)], data[1:]
    path = _STATE["paths"][target]
    with open(path, "wb") as fh:
        fh.write(data)
    try:
        _STATE["readers"][target](path)
    except ValueError as exc:
        text = str(exc)
        if "\n" in text.strip() or not text.strip():
            raise Finding(f"{type(exc).__name__} message is not one line: {text!r}") from exc
        if os.path.basename(path) not in text:
            raise Finding(f"{target}: {type(exc).__name__} does not name the file: {text!r}") from exc
    except RecursionError as exc:
        raise Finding(f"{target}: RecursionError: {exc}") from exc
    except Exception as exc:  # any other type is a finding
        raise Finding(f"{target}: {type(exc).__name__}: {exc}") from exc


def _fallback(target, corpus_dirs, seconds, runs):
    """Random byte mutation over the seed corpus (no coverage guidance)."""
    seeds = []
    for d in corpus_dirs:
        for name in sorted(os.listdir(d)):
            with open(os.path.join(d, name), "rb") as fh:
                seeds.append(fh.read())
    seeds = seeds or [b""]
    rng = random.Random(1)
    t_end = time.monotonic() + seconds
    n = 0
    while time.monotonic() < t_end and (runs <= 0 or n < runs):
        data = bytearray(rng.choice(seeds))
        for _ in range(rng.randint(1, 8)):
            op = rng.randrange(4)
            pos = rng.randrange(len(data) + 1)
            if op == 0 and data:
                data[min(pos, len(data) - 1)] = rng.randrange(256)
            elif op == 1:
                data[pos:pos] = bytes([rng.choice(b"0123456789.-e+,[]{}=\"' \n<>/axyzq_")])
            elif op == 2 and data:
                del data[pos:pos + rng.randint(1, 16)]
            else:
                other = rng.choice(seeds)
                i = rng.randrange(len(other) + 1)
                data[pos:pos] = other[i:i + rng.randint(1, 64)]
        try:
            check_one(bytes(data))
        except Finding as exc:
            if _is_known(target, str(exc)):
                n += 1
                continue
            out = os.path.join(os.getcwd(), f"finding-{target}-{n}{SUFFIX.get(target, '.bin')}")
            with open(out, "wb") as fh:
                fh.write(bytes(data))
            print(f"fuzz_loaders {target}: FINDING after {n} inputs: {exc} (input: {out})")
            return 1
        n += 1
    print(f"fuzz_loaders {target}: fallback mutation fuzzer, {n} executions, no new finding"
          + (f"; known findings hit: {_STATE['known']}" if _STATE["known"] else ""))
    return 0


def seed_all(out_dir):
    """Corpus for the `all` target: every seed of fuzz/corpus/<t> behind its selector byte."""
    os.makedirs(out_dir, exist_ok=True)
    n = 0
    for k, t in enumerate(TARGETS):
        src = os.path.join(HERE, "corpus", t)
        for name in sorted(os.listdir(src)) if os.path.isdir(src) else []:
            with open(os.path.join(src, name), "rb") as fh:
                data = fh.read()
            with open(os.path.join(out_dir, f"{t}-{name}"), "wb") as fh:
                fh.write(bytes([k]) + data)
            n += 1
    return n


def main(argv):
    if len(argv) == 3 and argv[1] == "--seed-all":
        print(f"{seed_all(argv[2])} seeds written to {argv[2]}")
        return 0
    if len(argv) < 2 or (argv[1] not in SUFFIX and argv[1] != "all"):
        print(__doc__)
        return 2
    target = argv[1]
    rest = [a for a in argv[2:] if a != "--fallback"]
    use_fallback = "--fallback" in argv
    try:
        import atheris
    except ImportError:
        atheris = None
        use_fallback = True
    if use_fallback:
        _setup(target)
        dirs = [a for a in rest if os.path.isdir(a)]
        secs = next((int(a.split("=", 1)[1]) for a in rest if a.startswith("-max_total_time=")), 30)
        runs = next((int(a.split("=", 1)[1]) for a in rest if a.startswith("-runs=")), 0)
        return _fallback(target, dirs, secs, runs)

    # An editable install serves ffwd through its own import hook, which atheris's
    # import instrumentation does not see: read ffwd's Python files from the source
    # tree instead (the loaders need no compiled part).
    sys.meta_path[:] = [f for f in sys.meta_path if "editable" not in type(f).__module__.lower()]
    import numpy  # noqa: F401  (not ours: imported before instrumenting)
    import scipy.interpolate  # noqa: F401
    import scipy.signal  # noqa: F401
    with atheris.instrument_imports(include=["ffwd"]):
        _setup(target)

    def one_input(data):
        try:
            check_one(data)
        except Finding as exc:
            if _is_known(target, str(exc)):
                return
            print(f"fuzz_loaders {target}: FINDING: {exc}", file=sys.stderr)
            raise

    atexit.register(lambda: _STATE["known"] and print(
        f"fuzz_loaders {target}: known findings hit: {_STATE['known']}", file=sys.stderr))
    atheris.Setup([argv[0]] + rest, one_input)
    atheris.Fuzz()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
