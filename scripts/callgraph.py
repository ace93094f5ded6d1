#!/usr/bin/env python3
"""The file-level call graph of liblantern from its object files.

Each object file of the library (BUILD/src/*/*.o, src/cli excluded: the
command line may call anything) is a node; A -> B when A leaves a symbol
undefined that B defines (nm's global symbols). Prints every loop (a
strongly connected component of more than one file) and every reference
that breaks a "must not" rule of DESIGN.md's module table, one per line,
and exits 1 if there is any; exit 0 and "no loops" otherwise.

Usage: callgraph.py [BUILD]   (default build; make asan uses build/asan)
       callgraph.py --edges [BUILD]   prints the graph, "A -> B: symbols"
"""
import glob
import os
import subprocess
import sys

# DESIGN.md, "Modules": a module that must not reach into another. Only the
# rules a symbol table can show are here.
FORBIDDEN = [
    ("src/likelihood/", "src/inference/", "likelihood must not call inference"),
    ("src/inference/", "src/survey/", "inference must not call survey"),
    ("src/report/", "src/campaign/", "report must not reach campaign"),
    ("src/report/", "src/pipeline/", "report must not reach the pipeline"),
    ("src/report/", "src/inference/", "report must not run methods"),
    ("src/posterior/", "src/pipeline/", "posterior must not reach the pipeline"),
    ("src/posterior/", "src/campaign/", "posterior must not reach campaign"),
    ("src/posterior/", "src/report/", "posterior must not reach report"),
]

# The functions that run a likelihood (evaluate, predict, derive a
# quantity at a point, make its work space or the likelihood itself), and
# the methods that do. Reports may read the parameter table (names, priors,
# counts) but call none of these: DESIGN.md, report "must not compute
# likelihoods", posterior "must not run a likelihood".
COMPUTE = {
    "lt_like_alloc", "lt_like_eval", "lt_like_eval_exact", "lt_like_eval_exact_many",
    "lt_like_predict", "lt_like_quantity", "lt_like_derived", "lt_like_work_alloc",
    "lt_like_logdensity", "lt_like_nested_loglike", "lt_like_check_posterior",
    "lt_like_compression_set", "lt_optimize", "lt_fit_run", "lt_mcmc_run", "lt_nested_iterate",
}
FORBIDDEN_SYMBOLS = [
    ("src/report/", COMPUTE, "report must not compute likelihoods"),
    ("src/posterior/", COMPUTE, "posterior must not run a likelihood"),
    # library code returns its errors and never prints (DESIGN.md); the
    # pipeline, which runs long methods, does not even write to streams:
    # its progress goes to the caller's hooks
    ("src/", {"stdout", "stderr"}, "library code must not print"),
    ("src/pipeline/", {"printf", "fprintf", "puts", "fputs", "putchar", "fputc", "vfprintf",
                       "perror"}, "pipeline must not print"),
]


def symbols(obj):
    """(defined globals, undefined) of one object file."""
    out = subprocess.run(["nm", "-P", obj], check=True, capture_output=True, text=True).stdout
    defined, undefined = set(), set()
    for line in out.splitlines():
        parts = line.split()
        if len(parts) < 2:
            continue
        name, kind = parts[0], parts[1]
        if kind == "U":
            undefined.add(name)
        elif kind.isupper() and kind not in "UVW":
            defined.add(name)
    return defined, undefined


def graph(build):
    objs = sorted(o for o in glob.glob(os.path.join(build, "src", "*", "*.o"))
                  if not o.startswith(os.path.join(build, "src", "cli")))
    if not objs:
        sys.exit(f"callgraph: no object files under {build}/src (build first)")
    files = {o: os.path.relpath(o, build)[:-2] + ".c" for o in objs}
    owner, needs = {}, {}
    for o in objs:
        d, u = symbols(o)
        for s in d:
            owner[s] = files[o]
        needs[files[o]] = u
    edges = {f: {} for f in needs}
    for f, u in needs.items():
        for s in sorted(u):
            g = owner.get(s)
            if g and g != f:
                edges[f].setdefault(g, []).append(s)
    return edges, needs


def loops(edges):
    """Tarjan's strongly connected components with more than one file."""
    index, low, stack, on, out = {}, {}, [], set(), []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in sorted(edges[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in sorted(edges):
        if v not in index:
            visit(v)
    return out


def main(argv):
    show = "--edges" in argv
    args = [a for a in argv if a != "--edges"]
    edges, needs = graph(args[0] if args else "build")
    if show:
        for f in sorted(edges):
            for g in sorted(edges[f]):
                print(f"{f} -> {g}: {' '.join(edges[f][g])}")
        return 0
    bad = 0
    for comp in loops(edges):
        bad += 1
        calls = [f"{a} -> {b} ({', '.join(edges[a][b][:3])})"
                 for a in comp for b in comp if b in edges[a]]
        print(f"loop: {' <-> '.join(comp)}: " + "; ".join(calls))
    for src, dst, why in FORBIDDEN:
        for f in sorted(edges):
            if f.startswith(src):
                for g in sorted(edges[f]):
                    if g.startswith(dst):
                        bad += 1
                        print(f"{why}: {f} -> {g} ({', '.join(edges[f][g])})")
    for src, symbols, why in FORBIDDEN_SYMBOLS:
        for f in sorted(needs):
            hit = sorted(needs[f] & symbols)
            if f.startswith(src) and hit:
                bad += 1
                print(f"{why}: {f} uses {', '.join(hit)}")
    if not bad:
        print(f"no loops among {len(edges)} library files, no forbidden references")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
