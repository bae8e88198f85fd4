"""`ffwd flags`: compiler and linker flags for a C build against the installed package."""


def register(sub):
    p = sub.add_parser("flags", help="compiler/linker flags for building C code against libffwd",
                       description="Print the flags for compiling and linking C code against the "
                                   "ffwd core installed in this Python package (include directory, "
                                   "FFWD_MAX_DOF/FFWD_SINGLE of the build, the static libffwd.a). "
                                   "Without an option, prints every item as NAME=VALUE lines.")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--cflags", action="store_true", help="compiler flags (-I..., -D...)")
    g.add_argument("--libs", action="store_true", help="linker arguments: the static libffwd.a")
    g.add_argument("--libs-shared", action="store_true",
                   help="linker arguments for the shared libffwd.so (with an rpath)")
    g.add_argument("--cmake-dir", action="store_true",
                   help="folder with ffwdConfig.cmake (for -Dffwd_DIR=... or CMAKE_PREFIX_PATH)")
    g.add_argument("--pkgconfig-dir", action="store_true", help="folder with ffwd.pc (PKG_CONFIG_PATH)")
    p.set_defaults(func=run)


def flags():
    """Dict of the flag strings for the installed package."""
    import os
    import shlex

    from ..native import load_library, package_dir, shipped_library

    root = package_dir()
    lib = load_library(shipped_library())
    include = os.path.join(root, "include")
    libdir = os.path.join(root, "lib")
    defines = f"-DFFWD_MAX_DOF={lib.max_dof}" + (" -DFFWD_SINGLE" if lib.real_size == 4 else "")
    q = shlex.quote
    return {
        "cflags": f"-I{q(include)} {defines}",
        "libs": q(os.path.join(libdir, "libffwd.a")),
        "libs_shared": f"-L{q(libdir)} -lffwd -Wl,-rpath,{q(libdir)}",
        "cmake_dir": os.path.join(libdir, "cmake", "ffwd"),
        "pkgconfig_dir": os.path.join(libdir, "pkgconfig"),
    }


def run(args):
    f = flags()
    for key in ("cflags", "libs", "libs_shared", "cmake_dir", "pkgconfig_dir"):
        if getattr(args, key):
            print(f[key])
            return 0
    for key, value in f.items():
        print(f"{key.upper()}={value}")
    return 0
