"""The installed library: `cmake --install` into a scratch prefix, a C
program built against it alone, and its mean against the CLI's.

Outside references: cmake's own install step does the installing;
pkg-config (freedesktop.org) and CMake's find_package read what it put
there; binutils' `nm -D --defined-only` and `readelf -d` read the shared
library's dynamic symbol table and soname; tifffile reads the TIFFs.

Checks:
- the umbrella header pixpost.h includes every other public header;
- the prefix holds lib/libpixpost.so.MAJOR (soname libpixpost.so.MAJOR,
  MAJOR the project version's), the .so link, libpixpost.a, every public
  header of include/pixpost/ (byte-identical), pixpost.pc and the CMake
  package (pixpostConfig.cmake, its version file, the targets);
- `pkg-config --modversion pixpost`, the installed `pixpost --version` and
  pp_version() (printed by the example) are the project version of
  CMakeLists.txt;
- no internal header (src/pixpost/*.h, docs/developers.md "Public API")
  is installed, and every installed header compiles on its own (cc
  -fsyntax-only -Werror with the prefix's include folder only), so no
  public header leans on one that is not installed;
- `nm -D --defined-only` of the installed .so lists only pp_ names, exactly
  the functions the public headers declare (parsed here, comments
  stripped), and none of the library's internal pp_ functions (those
  libpixpost.a defines beyond them, e.g. pp_fail, and every function the
  internal headers declare);
- every pp_ function the Python module (python/pixpost/_lib.py, ctypes)
  binds and examples/sample_frame.c calls is exported;
- examples/sample_frame.c, copied out of the tree, builds with
  `cc $(pkg-config --cflags --libs pixpost)` (PKG_CONFIG_PATH at the
  prefix) and with a CMake project using find_package(pixpost) and
  pixpost::pixpost, both -Wall -Wextra -Werror; both run with
  LD_LIBRARY_PATH at the prefix and load the prefix's libpixpost.so.MAJOR;
- for the same seed and settings their posterior mean equals the installed
  CLI's mean.tif value for value (the float32 arrays' bytes, read with
  tifffile; the files' headers may differ: the CLI writes OME-TIFF
  metadata), for: gaussian noise with the default prior (the library
  resolves it: adaptive, gibbs, pad), photon counts (camera) with the
  default prior (matern, hmc), and gaussian noise, gmrf1, periodic (mtc
  chosen by the library). The prior the example reports (the result's
  configuration) is the one the CLI's summary.json names.
"""
import glob
import json
import os
import re
import shutil
import subprocess

import pptest

tmp = pptest.tmpdir()
build = os.path.dirname(os.path.abspath(pptest.PROBES))   # PP_PROBES = <build>/tests
src = os.path.abspath(pptest.SOURCE)
prefix = os.path.join(tmp, "prefix")
cmake = shutil.which("cmake") or "cmake"


def sh(args, env=None, cwd=None, input_text=None):
    e = dict(os.environ)
    e.update(env or {})
    return subprocess.run(args, capture_output=True, text=True, env=e, cwd=cwd, input=input_text)


p = sh([cmake, "--install", build, "--prefix", prefix])
pptest.check(p.returncode == 0, "cmake --install %s --prefix %s: exit 0 (%s)"
             % (build, prefix, p.stderr.strip()[-300:]))

with open(os.path.join(src, "CMakeLists.txt")) as f:
    version = re.search(r"project\(pixpost VERSION ([0-9.]+)", f.read()).group(1)
major = version.split(".")[0]
lib = os.path.join(prefix, "lib")
so = os.path.join(lib, "libpixpost.so." + major)

# ---- what is installed ------------------------------------------------------
for rel in ["lib/libpixpost.so", "lib/libpixpost.so." + major, "lib/libpixpost.so." + version,
            "lib/libpixpost.a", "lib/pkgconfig/pixpost.pc", "lib/cmake/pixpost/pixpostConfig.cmake",
            "lib/cmake/pixpost/pixpostConfigVersion.cmake", "lib/cmake/pixpost/pixpostTargets.cmake",
            "bin/pixpost"]:
    pptest.check(os.path.exists(os.path.join(prefix, rel)), "installed: %s" % rel)
p = sh(["readelf", "-d", so])
m = re.search(r"\(SONAME\)\s+Library soname: \[([^\]]+)\]", p.stdout)
pptest.check(m is not None and m.group(1) == "libpixpost.so." + major,
             "soname of the installed library: %s (expected libpixpost.so.%s)"
             % (m.group(1) if m else None, major))
headers = sorted(os.path.basename(h) for h in glob.glob(os.path.join(src, "include/pixpost/*.h")))
inst = sorted(os.path.basename(h) for h in glob.glob(os.path.join(prefix, "include/pixpost/*.h")))
pptest.check(headers == inst, "the prefix holds the %d public headers (installed %d)"
             % (len(headers), len(inst)))
same = all(open(os.path.join(src, "include/pixpost", h), "rb").read()
           == open(os.path.join(prefix, "include/pixpost", h), "rb").read() for h in headers if h in inst)
pptest.check(same, "installed headers are byte-identical to include/pixpost/")

internal_headers = sorted(os.path.basename(h) for h in glob.glob(os.path.join(src, "src/pixpost/*.h")))
pptest.check(len(internal_headers) > 0 and not (set(internal_headers) & set(inst)),
             "none of the %d internal headers (src/pixpost/) is installed (installed: %s)"
             % (len(internal_headers), sorted(set(internal_headers) & set(inst))))
# the system's headers but not /usr/local/include, which may hold another
# pixpost's headers (an earlier install) that would hide a missing one
gcc_inc = sh(["cc", "-print-file-name=include"]).stdout.strip()
multiarch = sh(["cc", "-print-multiarch"]).stdout.strip()
sysinc = ["-nostdinc", "-isystem", gcc_inc] + (["-isystem", "/usr/include/" + multiarch] if multiarch else []) \
    + ["-isystem", "/usr/include"]
alone = []
for h in inst:
    p = sh(["cc", "-std=c11", "-Wall", "-Wextra", "-Werror", "-fsyntax-only"] + sysinc
           + ["-I", os.path.join(prefix, "include"), "-x", "c", "-"],
           cwd=tmp, input_text='#include "pixpost/%s"\n' % h)
    if p.returncode != 0:
        alone.append("%s: %s" % (h, p.stderr.strip()[-200:]))
pptest.check(not alone, "each of the %d installed headers compiles on its own against the prefix "
             "(failed: %s)" % (len(inst), alone[:3]))

umbrella = set(re.findall(r'#include "pixpost/([a-z0-9_]+\.h)"',
                          open(os.path.join(src, "include/pixpost/pixpost.h")).read()))
pptest.check(umbrella == set(headers) - {"pixpost.h"},
             "pixpost.h includes every public header (missing: %s)"
             % sorted(set(headers) - {"pixpost.h"} - umbrella))

# ---- one version --------------------------------------------------------------
pcenv = {"PKG_CONFIG_PATH": os.path.join(lib, "pkgconfig")}
p = sh(["pkg-config", "--modversion", "pixpost"], env=pcenv)
pptest.check(p.returncode == 0 and p.stdout.strip() == version,
             "pkg-config --modversion pixpost: %r (project version %s)" % (p.stdout.strip(), version))
p = sh([os.path.join(prefix, "bin", "pixpost"), "--version"], cwd=tmp)
pptest.check(p.stdout.startswith("pixpost %s " % version),
             "installed pixpost --version names %s: %r" % (version, p.stdout.splitlines()[:1]))

# ---- exported symbols ------------------------------------------------------------
declared = set()
for h in headers:
    text = open(os.path.join(src, "include/pixpost", h)).read()
    text = re.sub(r"/\*.*?\*/", " ", text, flags=re.S)
    text = re.sub(r"//[^\n]*", " ", text)
    declared |= set(re.findall(r"[\s*](pp_[a-z0-9_]+)\s*\(", text))
p = sh(["nm", "-D", "--defined-only", so])
exported = set(line.split()[-1].split("@")[0] for line in p.stdout.splitlines() if line.strip())
pptest.check(p.returncode == 0 and len(exported) > 0, "nm -D --defined-only reads %s (%d symbols)"
             % (so, len(exported)))
other = sorted(s for s in exported if not s.startswith("pp_"))
pptest.check(not other, "the shared library exports only pp_ names (others: %s)" % other[:10])
pptest.check(exported == declared, "exports = the %d functions the public headers declare "
             "(not declared: %s; declared, not exported: %s)"
             % (len(declared), sorted(exported - declared)[:8], sorted(declared - exported)[:8]))
callers = {}
for rel in ["python/pixpost/_lib.py", "examples/sample_frame.c"]:
    text = open(os.path.join(src, rel)).read()
    if rel.endswith(".c"):
        text = re.sub(r"/\*.*?\*/", " ", text, flags=re.S)
        callers[rel] = set(re.findall(r"\b(pp_[a-z0-9_]+)\s*\(", text))
    else:  # ctypes: the prototypes table, "pp_name": (restype, [argtypes])
        callers[rel] = set(re.findall(r"\"(pp_[a-z0-9_]+)\":\s*\(", text))
for rel, names in callers.items():
    pptest.check(len(names) >= 5 and names <= exported,
                 "the %d pp_ functions %s calls are exported (not exported: %s)"
                 % (len(names), rel, sorted(names - exported)))
internal_decl = set()
for h in glob.glob(os.path.join(src, "src/pixpost/*.h")):
    text = re.sub(r"/\*.*?\*/", " ", open(h).read(), flags=re.S)
    internal_decl |= set(re.findall(r"[\s*](pp_[a-z0-9_]+)\s*\(", text))
pptest.check(len(internal_decl) > 50 and not (internal_decl & exported),
             "none of the %d functions the internal headers (src/pixpost/) declare is exported "
             "(exported: %s)" % (len(internal_decl), sorted(internal_decl & exported)[:8]))
p = sh(["nm", "--defined-only", os.path.join(lib, "libpixpost.a")])
internal = set(l.split()[-1] for l in p.stdout.splitlines()
               if re.match(r"^[0-9a-f]+ [TDRB] pp_", l)) - declared
pptest.check("pp_fail" in internal and not (internal & exported),
             "%d internal pp_ functions of libpixpost.a (pp_fail among them) are hidden in the .so"
             % len(internal))

# ---- the example, built against the prefix only ----------------------------------
ex = os.path.join(tmp, "example")
os.makedirs(ex)
for f in ["sample_frame.c", "CMakeLists.txt"]:
    shutil.copy(os.path.join(src, "examples", f), ex)
p = sh(["pkg-config", "--cflags", "--libs", "pixpost"], env=pcenv)
flags = p.stdout.split()
# every -I/-L is the prefix's or the system's, none of the source or build tree
# (the scratch prefix itself lies in the build tree here)
paths = [os.path.realpath(f[2:]) for f in flags if f[:2] in ("-I", "-L")]
inside = [q for q in paths if not q.startswith(os.path.realpath(prefix) + os.sep)
          and q.startswith(os.path.realpath(src) + os.sep)]
pptest.check(p.returncode == 0 and paths and not inside,
             "pkg-config --cflags --libs pixpost names the prefix and system paths only "
             "(in the source or build tree: %s): %s" % (inside, p.stdout.strip()))
# a library built with PIXPOST_SANITIZE needs its runtime first: a program
# linking it is built with the same -fsanitize (CI's sanitizer job)
san = "libasan" in sh(["readelf", "-d", so]).stdout
sanflags = ["-fsanitize=address,undefined", "-fno-omit-frame-pointer"] if san else []
exe_pc = os.path.join(ex, "sample_frame_pc")
p = sh(["cc", "-std=c11", "-Wall", "-Wextra", "-Werror"] + sanflags + ["-o", exe_pc,
        os.path.join(ex, "sample_frame.c")] + flags, cwd=ex)
pptest.check(p.returncode == 0, "cc sample_frame.c $(pkg-config --cflags --libs pixpost): exit 0 (%s)"
             % p.stderr.strip()[-300:])
cbuild = os.path.join(ex, "build")
p = sh([cmake, "-S", ex, "-B", cbuild, "-DCMAKE_PREFIX_PATH=" + prefix,
        "-DCMAKE_C_FLAGS=-Wall -Wextra -Werror " + " ".join(sanflags),
        "-DCMAKE_EXE_LINKER_FLAGS=" + " ".join(sanflags), "-DCMAKE_BUILD_TYPE=Release"])
if p.returncode == 0:
    p = sh([cmake, "--build", cbuild])
exe_cm = os.path.join(cbuild, "sample_frame")
pptest.check(p.returncode == 0 and os.path.exists(exe_cm),
             "CMake project with find_package(pixpost) and pixpost::pixpost builds (%s)"
             % (p.stdout + p.stderr).strip()[-300:])
run_env = {"LD_LIBRARY_PATH": lib}
for exe in [exe_pc, exe_cm]:
    p = sh(["ldd", exe], env=run_env)
    m = re.search(r"libpixpost\.so\.%s => (\S+)" % major, p.stdout)
    pptest.check(m is not None and os.path.realpath(m.group(1)) == os.path.realpath(so),
                 "%s loads the prefix's libpixpost.so.%s (%s)"
                 % (os.path.basename(exe), major, m.group(1) if m else p.stdout.strip()[:200]))
p = sh([exe_pc], env=run_env)
pptest.check(p.returncode == 1 and ("libpixpost %s)" % version) in p.stderr,
             "pp_version() is %s (the example's usage line: %r)" % (version, p.stderr.strip()))

# ---- same seed, same mean as the CLI ------------------------------------------------
import numpy as np   # noqa: E402
import tifffile      # noqa: E402

images = os.path.join(src, "images")
AIRY = "airy:na=1.4,wavelength=0.52,pixel=0.065"
# name, frame, psf, noise, prior ("default": not given), seed, iters, burn, chains
cases = [
    ("gaussian_default", "demo_gaussian.tif", "gaussian:sigma=1.6", "gaussian", "default",
     11, 20, 20, 2, "pad"),
    ("camera_default", "demo_photons.tif", AIRY, "camera:gain=0.5,offset=100,read=1.6", "default",
     5, 30, 30, 2, "pad"),
    ("gmrf1_periodic", "demo_gaussian.tif", "gaussian:sigma=1.6", "gaussian", "gmrf1",
     3, 60, 40, 3, "periodic"),
]
# PIXPOST_TEST_SMALL=1 (CI's sanitizer job): chains a quarter as long (the
# means must still match byte for byte)
small = os.environ.get("PIXPOST_TEST_SMALL") == "1"
cli = os.path.join(prefix, "bin", "pixpost")
for name, frame, psf, noise, prior, seed, iters, burn, chains, boundary in cases:
    if small:
        iters, burn = max(4, iters // 4), max(4, burn // 4)
    fr = os.path.join(images, frame)
    out = os.path.join(tmp, "cli_" + name)
    args = [cli, "sample", fr, "--psf", psf, "--noise", noise, "--seed", str(seed),
            "--iters", str(iters), "--burn", str(burn), "--chains", str(chains), "--threads", "1",
            "--boundary", boundary, "--no-plan-cache", "--quiet", "-o", out]
    if prior != "default":
        args += ["--prior", prior]
    p = sh(args, cwd=tmp)
    pptest.check(p.returncode == 0, "%s: pixpost sample: exit 0 (%s)" % (name, p.stderr.strip()[-300:]))
    cli_mean = tifffile.imread(os.path.join(out, "mean.tif"))
    with open(os.path.join(out, "summary.json")) as f:
        summary = json.load(f)
    cli_prior = summary.get("prior")
    for exe in [exe_pc, exe_cm]:
        tif = os.path.join(tmp, "%s_%s.tif" % (name, os.path.basename(exe)))
        eargs = [exe, fr, psf, noise, prior, str(seed), str(iters), str(burn), str(chains), tif,
                 boundary]
        e = sh(eargs, env=run_env, cwd=tmp)
        ok = e.returncode == 0 and os.path.exists(tif)
        pptest.check(ok, "%s: %s runs: exit 0 (%s)" % (name, os.path.basename(exe),
                                                     (e.stdout + e.stderr).strip()[-300:]))
        if not ok:
            continue
        m = tifffile.imread(tif)
        same = m.dtype == cli_mean.dtype and m.shape == cli_mean.shape and m.tobytes() == cli_mean.tobytes()
        diff = float(np.nanmax(np.abs(m.astype(np.float64) - cli_mean))) if m.shape == cli_mean.shape else None
        pptest.check(same, "%s: %s's mean = the CLI's mean.tif byte for byte (%s %s, %d values; "
                     "max |diff| %s)" % (name, os.path.basename(exe), m.dtype, m.shape, m.size, diff))
        em = re.search(r"prior (\S+) ->", e.stdout)
        pptest.check(em is not None and cli_prior is not None and em.group(1) == cli_prior,
                     "%s: the prior that ran, %s (the result's configuration), is summary.json's %s"
                     % (name, em.group(1) if em else None, cli_prior))

pptest.done()
