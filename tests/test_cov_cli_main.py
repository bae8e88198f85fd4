"""The `ffwd` command's frame (ffwd/cli/__init__.py) and the small verbs run in-process:
`flags` (every item names a file that exists) and `export` (default C name, build hint)."""
import os
import subprocess
import sys

import pytest

import ffwd
from ffwd.cli import build_parser, main

ROBOT = os.path.join(os.path.dirname(__file__), "..", "examples", "robots", "planar3_vertical.toml")


def _leaves(parser, path):
    """(path, parser) of every parser that runs something: a verb or a verb's mode."""
    subs = [a for a in parser._actions if isinstance(a.choices, dict) and a.dest != "help"]
    if not subs:
        yield path, parser
        return
    for name, p in subs[0].choices.items():
        yield from _leaves(p, path + [name])


def test_every_verb_and_mode_has_a_run_function_and_help():
    leaves = list(_leaves(build_parser(), []))
    assert ["check"] in [p for p, _ in leaves]
    for path, p in leaves:
        assert p.get_default("func") is not None, f"ffwd {' '.join(path)} has no run function"
        assert p.description, f"ffwd {' '.join(path)} has no description for --help"


def test_interrupt_gives_exit_130(monkeypatch, capsys):
    from ffwd.cli import check

    def interrupted(args):
        raise KeyboardInterrupt
    monkeypatch.setattr(check, "run", interrupted)
    assert main(["check", ROBOT]) == 130
    assert capsys.readouterr().err.strip() == "ffwd check: interrupted"


def test_module_entry_point_exit_code(tmp_path):
    """`python -m ffwd.cli` is the installed command's code path: exit 2, one line."""
    bad = tmp_path / "bad.toml"
    bad.write_text(open(ROBOT).read().replace("mass = 5.0", "mass = 0.0", 1))
    r = subprocess.run([sys.executable, "-m", "ffwd.cli", "check", str(bad)],
                       capture_output=True, text=True, timeout=300)
    assert r.returncode == 2
    assert r.stderr.count("\n") == 1 and "bad.toml: joint 'j2': field 'link.mass' = 0.0" in r.stderr


def test_flags_items_exist(shipped_library, package_dir, capsys):
    assert main(["flags"]) == 0
    lines = capsys.readouterr().out.splitlines()
    items = dict(line.split("=", 1) for line in lines)
    assert list(items) == ["CFLAGS", "LIBS", "LIBS_SHARED", "CMAKE_DIR", "PKGCONFIG_DIR"]
    for option, key in (("--cflags", "CFLAGS"), ("--libs", "LIBS"),
                        ("--libs-shared", "LIBS_SHARED"), ("--cmake-dir", "CMAKE_DIR"),
                        ("--pkgconfig-dir", "PKGCONFIG_DIR")):
        assert main(["flags", option]) == 0
        assert capsys.readouterr().out.strip() == items[key]
    include = items["CFLAGS"].split()[0][2:]
    assert os.path.isfile(os.path.join(include, "ffwd.h"))
    assert "-DFFWD_MAX_DOF=16" in items["CFLAGS"].split()          # the default build
    assert os.path.isfile(items["LIBS"]) and items["LIBS"].endswith("libffwd.a")
    libdir = items["LIBS_SHARED"].split()[0][2:]
    assert os.path.isfile(os.path.join(libdir, "libffwd.so"))
    assert f"-Wl,-rpath,{libdir}" in items["LIBS_SHARED"]
    assert os.path.isfile(os.path.join(items["CMAKE_DIR"], "ffwdConfig.cmake"))
    assert os.path.isfile(os.path.join(items["PKGCONFIG_DIR"], "ffwd.pc"))


def test_export_default_name_and_build_hint(tmp_path, capsys):
    robot = ffwd.load(ROBOT)
    out = tmp_path / "gen"
    assert main(["export", ROBOT, "--out", str(out)]) == 0
    name = robot.name          # 'planar3_vertical' is already a C identifier
    printed = capsys.readouterr().out.splitlines()
    files = sorted(os.path.basename(p) for p in printed[:-1])
    assert files == sorted([f"{name}_model.h", f"{name}_model.c", "main.c"])
    assert all(os.path.isfile(p) for p in printed[:-1])
    assert printed[-1].startswith(f"build the example: cc -O2 {out}/main.c {out}/{name}_model.c")
    header = (out / f"{name}_model.h").read_text()
    assert f"extern const ffwd_model {name}_model;" in header


@pytest.mark.parametrize("robot_name, c", [("Arm-7 Left", "arm_7_left"), ("7axis", "robot_7axis"),
                                           ("***", "robot")])
def test_export_c_name(robot_name, c):
    from ffwd.export import c_name
    assert c_name(robot_name) == c
