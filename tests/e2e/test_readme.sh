#!/usr/bin/env bash
# The README's Pantheon 2018 examples (inspect, fit and sample of the binned
# release shipped in data/pantheon2018/) run from the repository as a fresh
# clone has it, and print what the README shows. The commands are taken from
# the README's own ```sh blocks, so that a changed command is what runs; each
# block of output that follows one must be what the command prints, line for
# line ('...' in the README stands for lines left out). The demo's table is
# checked the same way in test_run.sh, which runs the demo anyway; the Python
# example (README "Python") the same way here.
# All three take well under a second: they run in make test.
source "$(dirname "$0")/lib.sh"
# as make demo and test_run.sh do: OpenBLAS's kernels fixed, so that the
# last digits (and the fit's count of evaluations) are the README's on any
# x86-64 machine
export OPENBLAS_CORETYPE=${OPENBLAS_CORETYPE:-Haswell}

/usr/bin/python3 - "$ROOT" "$LANTERN" "$E2E_TMP" <<'PY'
import difflib, os, re, shlex, subprocess, sys

root, lantern, tmp = sys.argv[1:4]
readme = open(os.path.join(root, "README.md")).read().split("\n")


def report(ok, name, detail=""):
    print(("ok - " if ok else "not ok - ") + name)
    if not ok and detail:
        print("\n".join("  " + l for l in detail.splitlines()[:12]))


# fenced blocks: (language, lines, index of the line after the closing fence)
blocks, i = [], 0
while i < len(readme):
    m = re.match(r"^```(\w*)$", readme[i])
    if not m:
        i += 1
        continue
    j = i + 1
    while readme[j] != "```":
        j += 1
    blocks.append((m.group(1), readme[i + 1:j], j + 1))
    i = j + 1


def output_after(k):
    """The plain block right after block k (blank lines between), or None."""
    end = blocks[k][2]
    if k + 1 < len(blocks) and blocks[k + 1][0] == "":
        start = end
        nxt = readme.index("```", start) if "```" in readme[start:] else None
        if all(not l.strip() for l in readme[start:nxt]):
            return blocks[k + 1][1]
    return None


def matches(want, got):
    """want (README lines, '...' a gap of any length) is all of got."""
    parts, cur = [], []
    for l in want:
        if l == "...":
            parts.append(cur)
            cur = []
        else:
            cur.append(l)
    parts.append(cur)
    if len(parts) == 1:
        return want == got
    if got[:len(parts[0])] != parts[0] or (parts[-1] and got[-len(parts[-1]):] != parts[-1]):
        return False
    pos, last = len(parts[0]), len(got) - len(parts[-1])
    for p in parts[1:-1]:
        while pos <= last - len(p) and got[pos:pos + len(p)] != p:
            pos += 1
        if pos > last - len(p):
            return False
        pos += len(p)
    return pos <= last


examples = []
for k, (lang, lines, _) in enumerate(blocks):
    text = "\n".join(lines).replace("\\\n", " ")
    if lang != "sh" or "data/pantheon2018/" not in text:
        continue
    for cmd in text.splitlines():
        if re.match(r"^bin/lantern (inspect|fit|sample) ", cmd):
            examples.append((cmd, output_after(k)))

verbs = sorted({c.split()[1] for c, _ in examples})
report(verbs == ["fit", "inspect", "sample"],
       "the README shows inspect, fit and sample of data/pantheon2018/", "found: %s" % verbs)

fit_stdout = None
for n, (cmd, want) in enumerate(examples):
    args = shlex.split(cmd)
    name = "README: " + " ".join(args[:2]) + " of the binned Pantheon files"
    # from a fresh clone: nothing outside the repository
    outside = [a for a in args if a.startswith("../") or "/shared/" in a]
    report(not outside, name + " reads only the repository's files", "outside: %s" % outside)
    # the README's --out folder would hold a run after the first time
    for i, a in enumerate(args):
        if a == "--out":
            args[i + 1] = os.path.join(tmp, "readme-out-%d" % n)
    r = subprocess.run([lantern] + args[1:], cwd=root, capture_output=True, text=True,
                       timeout=300)
    report(r.returncode == 0, name + " exits 0", r.stderr)
    out, err = r.stdout.splitlines(), r.stderr.splitlines()
    if args[1] == "fit":
        fit_stdout = out
    if want is None:
        report(False, name + ": the README shows its output")
        continue
    # the README shows stdout, or stderr then stdout (the warnings first)
    same = matches(want, out) or matches(want, err + out)
    shown = err + out if want and want[0] in err else out
    diff = "\n".join(l for l in difflib.unified_diff(want, shown, "README", "printed", lineterm="")
                     if l[:1] in "+-" and l[1:2] != l[:1] and l[1:] != "...")
    report(same, name + ": its output is what the README shows", diff)

# The README's "same from a run file": configs/pantheon2018.ini gives the
# fit block's table (its first line names the file by the run file's path).
r = subprocess.run([lantern, "fit", "configs/pantheon2018.ini"], cwd=root, capture_output=True,
                   text=True, timeout=300)
got = r.stdout.splitlines()
report(r.returncode == 0 and fit_stdout is not None and got[1:] == fit_stdout[1:] and
       got[0].endswith("data/pantheon2018/lcparam_DS17f.txt: 40 objects, observable mag"),
       "README: bin/lantern fit configs/pantheon2018.ini prints the fit shown", r.stderr)

# The README's Python example (make python has built the package: make test
# builds it first) runs from the repository and prints what the README shows.
py_blocks = [(k, lines) for k, (lang, lines, _) in enumerate(blocks)
             if lang == "sh" and any("PYTHONPATH=build/python" in l for l in lines)]
report(len(py_blocks) >= 1, "the README shows a Python example")
for k, lines in py_blocks:
    script = "\n".join(l for l in lines if l.strip() != "make python")
    r = subprocess.run(["bash", "-c", script], cwd=root, capture_output=True, text=True,
                       timeout=300)
    want = output_after(k)
    report(r.returncode == 0 and want is not None and matches(want, r.stdout.splitlines()),
           "README: the Python example runs and prints what the README shows",
           r.stderr + "\n".join(r.stdout.splitlines()))

# The comparison can fail: one digit changed, or a line missing, is told apart.
want = ["a", "...", "c", "d"]
report(matches(want, ["a", "b", "c", "d"]) and not matches(want, ["a", "b", "c", "e"]) and
       not matches(want, ["a", "c"]) and not matches(["a", "b"], ["a", "b", "c"]) and
       matches(["a", "...", "c", "...", "e"], ["a", "x", "c", "y", "z", "e"]),
       "the README comparison tells a changed or missing line apart")
PY
