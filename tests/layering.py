"""Layering of the sources: dependencies between files point one way.

    layering.py SOURCE_DIR LIBRARY   (ctest runs it as "layering")

Fails when
  - the include graph of src/, src/cli/ and include/pixpost/ (#include "...")
    has a cycle;
  - a library file (src/*.c, src/*.h, src/pixpost/*.h, include/pixpost/*.h)
    includes a header of the command-line front end (src/cli/);
  - a public header (include/pixpost/*.h, installed) includes anything but
    another public header or a system header: an internal header
    (src/pixpost/*.h, src/*.h; docs/developers.md "Public API") is not
    installed, so a public header including one would not compile for a
    caller of the installed library;
  - the call graph of the library's objects has a cycle between two source
    files: object A uses a symbol object B defines and B (perhaps through
    others) uses one A defines. The graph comes from `nm` of the static
    library (defined T/D/R/B symbols and undefined U symbols per object), so
    it sees calls and references to data (a kernel table) alike.
STYLE.md, "Include arrows point one way: no cycles"; issue #18 step 0.
Before it reports on the tree, it checks itself on small made-up cases (a
cycle and a library file including a CLI header) that it must catch.
"""
import os
import re
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import pptest  # noqa: E402

INCLUDE = re.compile(r'^\s*#\s*include\s+"([^"]+)"', re.M)


def cycles(graph):
    """Strongly connected components with more than one node (Tarjan),
    each a sorted list; graph maps a node to the set of its successors."""
    index, low, stack, on, out = {}, {}, [], set(), []
    counter = [0]
    nodes = set(graph) | {w for ws in graph.values() for w in ws}

    def visit(v):
        # iterative Tarjan: (node, iterator over successors)
        work = [(v, iter(sorted(graph.get(v, ()))))]
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        while work:
            node, it = work[-1]
            advanced = False
            for w in it:
                if w not in index:
                    index[w] = low[w] = counter[0]
                    counter[0] += 1
                    stack.append(w)
                    on.add(w)
                    work.append((w, iter(sorted(graph.get(w, ())))))
                    advanced = True
                    break
                if w in on:
                    low[node] = min(low[node], index[w])
            if advanced:
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[node])
            if low[node] == index[node]:
                comp = []
                while True:
                    w = stack.pop()
                    on.discard(w)
                    comp.append(w)
                    if w == node:
                        break
                if len(comp) > 1:
                    out.append(sorted(comp))

    for v in sorted(nodes):
        if v not in index:
            visit(v)
    return out


def source_files(root):
    """Relative paths of the C sources and headers of the library, the CLI
    and the public headers."""
    out = []
    for sub in ("src", os.path.join("src", "cli"), os.path.join("src", "pixpost"),
                os.path.join("include", "pixpost")):
        d = os.path.join(root, sub)
        if not os.path.isdir(d):
            continue
        for name in sorted(os.listdir(d)):
            if name.endswith((".c", ".h", ".inc")):
                out.append(os.path.join(sub, name))
    return out


def is_public(rel):
    return rel.startswith(os.path.join("include", "pixpost") + os.sep)


def is_library(rel):
    return not rel.startswith(os.path.join("src", "cli") + os.sep)


def include_graph(root):
    """(graph, problems): graph maps a file to the files it includes (paths
    relative to root, resolved as the build does: the including file's
    folder, then include/, then src/ for library files; src/cli/ is on the
    path of the CLI only); problems lists library files including a CLI
    header or a public header including a header that is not public."""
    graph, problems = {}, []
    for rel in source_files(root):
        with open(os.path.join(root, rel), encoding="utf-8", errors="replace") as fh:
            text = fh.read()
        here = os.path.dirname(rel)
        paths = [here, "include", "src"] if is_library(rel) else [here, "include", "src", os.path.join("src", "cli")]
        deps = set()
        for name in INCLUDE.findall(text):
            target = None
            for p in paths:
                cand = os.path.normpath(os.path.join(p, name))
                if os.path.isfile(os.path.join(root, cand)):
                    target = cand
                    break
            if is_public(rel) and (target is None or not is_public(target)):
                problems.append("%s includes \"%s\", which is not a public header (include/pixpost/)"
                                % (rel, name))
            if target is None:
                cli = os.path.normpath(os.path.join("src", "cli", name))
                if is_library(rel) and os.path.isfile(os.path.join(root, cli)):
                    problems.append("%s includes \"%s\", a header of the CLI (src/cli/)" % (rel, name))
                continue
            if is_library(rel) and not is_library(target):
                problems.append("%s includes \"%s\", a header of the CLI (src/cli/)" % (rel, name))
            deps.add(target)
        graph[rel] = deps
    return graph, problems


def call_graph(nm_text):
    """(graph, why): graph maps an object to the objects defining symbols it
    uses; why[(a, b)] lists those symbols. nm_text is `nm -A LIB` output."""
    defined, used = {}, {}
    for line in nm_text.splitlines():
        parts = line.split()
        if len(parts) < 2:
            continue
        fields = parts[0].split(":")
        if len(fields) < 2:
            continue
        obj, kind, sym = fields[1], parts[-2], parts[-1]
        if kind == "U":
            used.setdefault(obj, set()).add(sym)
        elif kind in "TDRBGSC":
            defined[sym] = obj
    graph, why = {}, {}
    for obj, syms in used.items():
        for sym in syms:
            other = defined.get(sym)
            if other and other != obj:
                graph.setdefault(obj, set()).add(other)
                why.setdefault((obj, other), []).append(sym)
    return graph, why


def describe(comp, graph, why=None):
    lines = []
    for a in comp:
        for b in sorted(graph.get(a, ())):
            if b in comp:
                syms = " (%s)" % ", ".join(sorted(why[(a, b)])[:4]) if why else ""
                lines.append("    %s -> %s%s" % (a, b, syms))
    return "\n".join(lines)


def self_check():
    """The checks must fire on made-up broken cases."""
    pptest.check(cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]],
                 "self-check: a three-file cycle is found (and d, outside it, is not in it)")
    pptest.check(cycles({"a": {"b"}, "b": {"c"}}) == [], "self-check: a chain without a cycle passes")
    nm = ("lib.a:x.c.o:0000000000000000 T pp_x\nlib.a:x.c.o:                 U pp_y\n"
          "lib.a:y.c.o:0000000000000010 T pp_y\nlib.a:y.c.o:                 U pp_x\n")
    g, why = call_graph(nm)
    pptest.check(cycles(g) == [["x.c.o", "y.c.o"]] and why[("x.c.o", "y.c.o")] == ["pp_y"],
                 "self-check: nm output with x.c -> y.c -> x.c gives a call cycle")
    with tempfile.TemporaryDirectory() as root:
        os.makedirs(os.path.join(root, "src", "cli"))
        os.makedirs(os.path.join(root, "include", "pixpost"))
        os.makedirs(os.path.join(root, "src", "pixpost"))
        files = {"src/a.c": '#include "a.h"\n#include "cli.h"\n', "src/a.h": '#include "b.h"\n',
                 "src/b.h": '#include "a.h"\n', "src/cli/cli.h": "", "src/cli/main.c": '#include "cli.h"\n#include "a.h"\n',
                 "include/pixpost/p.h": '#include "pixpost/q.h"\n#include "pixpost/r.h"\n',
                 "include/pixpost/q.h": "", "src/pixpost/r.h": '#include "pixpost/q.h"\n'}
        for rel, text in files.items():
            with open(os.path.join(root, rel), "w") as fh:
                fh.write(text)
        g, problems = include_graph(root)
        pptest.check(sorted(problems) == ['include/pixpost/p.h includes "pixpost/r.h", which is not a public header (include/pixpost/)',
                                  'src/a.c includes "cli.h", a header of the CLI (src/cli/)'],
                     "self-check: a library file including a CLI header and a public header including an "
                     "internal one (src/pixpost/r.h) are found (the CLI including a library header, an "
                     "internal header including a public one are fine)")
        pptest.check(cycles(g) == [["src/a.h", "src/b.h"]], "self-check: an include cycle a.h <-> b.h is found")


def main():
    if len(sys.argv) != 3:
        sys.exit("usage: layering.py SOURCE_DIR LIBRARY")
    root, lib = sys.argv[1], sys.argv[2]
    self_check()

    graph, problems = include_graph(root)
    pptest.check(len(graph) > 50, "the include graph covers the sources (%d files)" % len(graph))
    for p in problems:
        print("   " + p)
    pptest.check(not problems, "no library file includes a CLI header (src/cli/), no public header "
                 "an internal one")
    comps = cycles(graph)
    for c in comps:
        print("   include cycle:\n" + describe(c, graph))
    pptest.check(not comps, "no include cycle among src/, src/cli/, include/pixpost/")

    nm = subprocess.run(["nm", "-A", lib], capture_output=True, text=True, check=True).stdout
    graph, why = call_graph(nm)
    pptest.check(len(graph) > 30, "the call graph covers the library's objects (%d objects with calls)" % len(graph))
    comps = cycles(graph)
    for c in comps:
        print("   call cycle:\n" + describe(c, graph, why))
    pptest.check(not comps, "no call cycle between library source files (nm of %s)" % os.path.basename(lib))
    pptest.done()


if __name__ == "__main__":
    main()
