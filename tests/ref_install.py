"""`cmake --install` into a scratch prefix, and what it put there.

Outside references: man-db's `man -l` and GNU groff (`groff -man -Tutf8 -ww`,
every warning on) read the man page; bash runs the completion script the way
bash's programmable completion calls it (COMP_WORDS, COMP_CWORD, COMPREPLY:
bash(1), "Programmable Completion"); cmake's own install step does the
installing.

Checks:
- the prefix holds bin/pixpost, share/man/man1/pixpost.1,
  share/bash-completion/completions/pixpost and the demo's frames in
  share/pixpost/images (byte-identical to images/);
- the installed binary runs --version and --help from another folder;
- the man page renders without a groff warning, and its COMMANDS section
  describes exactly the commands `pixpost --help` lists (so the two cannot
  drift); every option the man page names exists in some command's --help;
- the completion script offers exactly the commands of `pixpost --help`, and
  for each command exactly the options of `pixpost COMMAND --help`;
- the installed `pixpost demo` takes its frames from the prefix (its first
  line names the folder), not from the source tree.
"""
import hashlib
import os
import re
import shutil
import signal
import subprocess

import pptest

tmp = pptest.tmpdir()
build = os.path.dirname(os.path.abspath(pptest.PROBES))   # PP_PROBES = <build>/tests
prefix = os.path.join(tmp, "prefix")
cmake = shutil.which("cmake") or "cmake"

p = subprocess.run([cmake, "--install", build, "--prefix", prefix], capture_output=True, text=True)
pptest.check(p.returncode == 0, "cmake --install %s --prefix %s: exit 0 (%s)"
             % (build, prefix, p.stderr.strip()[-300:]))

exe = os.path.join(prefix, "bin", "pixpost")
man = os.path.join(prefix, "share", "man", "man1", "pixpost.1")
comp = os.path.join(prefix, "share", "bash-completion", "completions", "pixpost")
pptest.check(os.path.isfile(exe) and os.access(exe, os.X_OK), "bin/pixpost installed, executable")
pptest.check(os.path.isfile(man), "share/man/man1/pixpost.1 installed")
pptest.check(os.path.isfile(comp), "share/bash-completion/completions/pixpost installed")


def sha(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


for name in ("scene_truth.tif", "demo_gaussian.tif", "demo_photons.tif",
             "stack_truth.tif", "demo_stack_gaussian.tif", "README.md"):
    inst = os.path.join(prefix, "share", "pixpost", "images", name)
    src = os.path.join(pptest.SOURCE, "images", name)
    pptest.check(os.path.isfile(inst) and sha(inst) == sha(src),
                 "share/pixpost/images/%s installed, identical to images/%s" % (name, name))


def run(args, **kw):
    return subprocess.run([exe] + args, capture_output=True, text=True, cwd=tmp, **kw)


v = run(["--version"])
pptest.check(v.returncode == 0 and v.stdout.startswith("pixpost "),
             "installed pixpost --version: exit 0, '%s'" % v.stdout.splitlines()[0] if v.stdout else "")
h = run(["--help"])
pptest.check(h.returncode == 0 and "Commands:" in h.stdout, "installed pixpost --help: exit 0, lists commands")

# The commands --help lists: the lines between "Commands:" and the next blank line.
commands = []
inside = False
for line in h.stdout.splitlines():
    if line.startswith("Commands:"):
        inside = True
        continue
    if inside:
        if not line.strip():
            break
        m = re.match(r"^  ([a-z]+)\s", line)
        if m:
            commands.append(m.group(1))
pptest.check(len(commands) >= 6, "--help lists %d commands: %s" % (len(commands), " ".join(commands)))


def help_options(cmd):
    """The options a command's --help defines (its option lines, not its prose)."""
    out = run([cmd, "--help"]).stdout
    opts = set()
    for line in out.splitlines():
        m = re.match(r"^  (-[a-zA-Z]), (--[a-z][a-z-]*)", line)
        if m:
            opts.update(m.groups())
            continue
        m = re.match(r"^  (--[a-z][a-z-]*)", line)
        if m:
            opts.add(m.group(1))
    return opts


options = {c: help_options(c) for c in commands}
for c in commands:
    pptest.check(len(options[c]) >= 2, "pixpost %s --help defines %d options" % (c, len(options[c])))

# The man page: groff with every warning on, then man-db's rendering.
g = subprocess.run(["groff", "-man", "-Tutf8", "-ww", man], capture_output=True, text=True)
pptest.check(g.returncode == 0 and g.stderr.strip() == "",
             "groff -man -Tutf8 -ww: exit 0, no warnings (%s)" % g.stderr.strip()[:300])
env = dict(os.environ, MANWIDTH="100", MAN_KEEP_FORMATTING="0", MANPAGER="cat", PAGER="cat")
m = subprocess.run(["man", "-l", man], capture_output=True, text=True, env=env)
# man may embolden with backspaces when not on a terminal; strip them (col -b does the same).
text = re.sub(r".\x08", "", m.stdout)
pptest.check(m.returncode == 0 and "NAME" in text and "EXIT STATUS" in text,
             "man -l: exit 0, NAME and EXIT STATUS sections")
version = v.stdout.split()[1] if v.stdout.split()[1:] else "?"
with open(man) as f:
    th = next((line for line in f if line.startswith(".TH ")), "")
pptest.check('"pixpost %s"' % version in th,
             "man page's .TH names the version --version prints (%s): %s" % (version, th.strip()))


def section(text, name):
    """The lines of one top-level section of the rendered page."""
    lines, inside = [], False
    for line in text.splitlines():
        if re.match(r"^[A-Z][A-Z ]+$", line):
            inside = line.strip() == name
            continue
        if inside:
            lines.append(line)
    return lines


# A command's entry is a tag line at the section's tag indent: "       name ...".
tags = set()
for line in section(text, "COMMANDS"):
    mm = re.match(r"^ {7}([a-z]+)(\s|$)", line)
    if mm:
        tags.add(mm.group(1))
pptest.check(tags == set(commands),
             "man page COMMANDS describes exactly the commands of --help (man: %s; help: %s)"
             % (" ".join(sorted(tags)), " ".join(sorted(commands))))
all_opts = set().union(*options.values())
named = set(re.findall(r"(?<![\w-])--[a-z][a-z-]*[a-z]", text))
unknown = sorted(o for o in named if o not in all_opts and o not in ("--help", "--version"))
pptest.check(not unknown, "every option the man page names exists in a command's --help "
             "(%d named; unknown: %s)" % (len(named), " ".join(unknown) or "none"))


# The completion script, called as bash's programmable completion calls it.
def complete(words):
    script = ('source "$1"; shift; COMP_WORDS=("$@"); COMP_CWORD=$(( $# - 1 )); '
              'COMPREPLY=(); _pixpost; printf "%s\\n" "${COMPREPLY[@]}"')
    env = dict(os.environ, PATH=os.path.join(prefix, "bin") + os.pathsep + os.environ.get("PATH", ""))
    r = subprocess.run(["bash", "-c", script, "bash", comp] + words,
                       capture_output=True, text=True, env=env, cwd=tmp)
    return r.returncode, set(x for x in r.stdout.splitlines() if x)


rc, got = complete(["pixpost", ""])
pptest.check(rc == 0 and got == set(commands) | {"--help", "--version"},
             "completion of 'pixpost ': the commands of --help (%s)" % " ".join(sorted(got)))
for c in commands:
    rc, got = complete(["pixpost", c, "-"])
    pptest.check(rc == 0 and got == options[c] | {"--help"},
                 "completion of 'pixpost %s -': exactly its --help options (%d; missing %s; extra %s)"
                 % (c, len(got), " ".join(sorted(options[c] - got)) or "none",
                    " ".join(sorted(got - options[c] - {"--help"})) or "none"))
rc, got = complete(["pixpost", "sample", "frame.tif", "--sampler", "h"])
pptest.check(got == {"hmc"}, "completion of 'pixpost sample frame.tif --sampler h': hmc")

# The installed demo finds the installed frames. Its first line names the
# folder; the run itself is the quick start's (the CI runs it in full), so
# it is stopped here with SIGINT once the line is seen.
# (No stdbuf: its preloaded library breaks an ASan-built pixpost; the demo
# flushes the line itself.)
cmd = [exe, "demo", "-o", os.path.join(tmp, "demo")]
proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, cwd=tmp)
first = proc.stdout.readline().strip()
proc.send_signal(signal.SIGINT)
try:
    proc.communicate(timeout=600)
except subprocess.TimeoutExpired:
    proc.kill()
    proc.communicate()
want = os.path.join(prefix, "bin", "..", "share", "pixpost", "images")
pptest.check(first == "pixpost demo: bundled frames from %s" % want,
             "installed pixpost demo reads the prefix's frames: '%s'" % first)

pptest.done()
