#!/usr/bin/python3
"""No output of any command ever holds a non-finite number (issue 14).

    /usr/bin/python3 tests/golden/finite.py ./loopwise

Runs every command, as text, as JSON and as CSV where it writes CSV, over
every demo case (cases/), every reference network (tests/ref/nets, extreme,
large), the small limit cases of tests/limits/gen.py, and a few networks
made here to reach the undefined figures (a loop that never crosses 0 dB,
Monte Carlo of one sample, of samples that all fail). Fails when standard
output, a CSV file or the warnings of a run that succeeded hold a token
`nan`, `inf`, `infinity` (any case, any sign) standing alone: undefined
figures are said in words (text) or null (JSON). Words that merely contain
the letters ("information", "infinite") are prose and pass. Refusals (exit
2) may quote what the user wrote (`r=inf` is the format's own constant), so
only their standard output, which must be empty, is checked.

The commands and their arguments are listed once, in COMMANDS below; a
command that `loopwise --help` lists and COMMANDS lacks fails the test.
"""
import concurrent.futures
import os
import re
import subprocess
import sys
import tempfile

LW = os.path.abspath(sys.argv[1] if len(sys.argv) > 1 else "./loopwise")
PY = "/usr/bin/python3"

# Every command with the arguments it needs; {cap}, {res}, {node} name an
# element or node of the file, {png} is a picture in the scratch directory.
# A command whose names the file lacks is skipped for that file.
COMMANDS = {
    "check": [[]],
    "gain": [["--points", "40"], ["--points", "40", "--csv", "-"]],
    "size": [["--tune", "{cap}"], ["--tune", "{res}", "--pm", "45", "--gm", "10"],
             # issue 18: two values together, over corners, for a yield
             ["--tune", "{cap}", "--tune", "{res}"],
             ["--tune", "{cap}", "--over", "corners", "--levels", "3", "--gm", "6"],
             ["--tune", "{cap}", "--over", "montecarlo", "--samples", "20", "--seed", "2",
              "--yield", "80%"]],
    "sweep": [["--vary", "{cap}", "--from", "1f", "--to", "1n", "--points", "6"],
              ["--vary", "{res}", "--from", "1", "--to", "10M", "--points", "6", "--csv", "-"],
              ["--vary", "{cap}", "--from", "1f", "--to", "1n", "--points", "4", "--to", "{node}",
               "--inject", "{node}"],
              # issue 18: the two-value map
              ["--vary", "{cap}", "--from", "1f", "--to", "1n", "--vary", "{res}", "--from", "1",
               "--to", "10M", "--points", "4"],
              ["--vary", "{cap}", "--from", "1f", "--to", "1n", "--vary", "{res}", "--from", "1",
               "--to", "10M", "--points", "4", "--csv", "-"]],
    "load": [["--node", "{node}", "--cload", "1f..10n", "--points", "6"]],
    "roots": [["-o", "{png}"]],
    "polar": [["-o", "{png}"]],
    "corners": [["--gm", "6"], ["--levels", "3"]],
    "montecarlo": [["--samples", "40", "--seed", "3", "--yield", "90%"],
                   ["--samples", "1", "--seed", "1", "--gm", "6"],
                   # issue 13: a part, its samples' CSV (on standard output), and the
                   # report merged from two parts ({parts}: their files, written first)
                   ["--samples", "40", "--seed", "3", "--part", "2/3", "--samples-out", "{csv}"],
                   ["--samples", "40", "--seed", "3", "--part", "1/3", "--samples-out", "-"],
                   ["--yield", "90%", "--merge", "{parts}"]],
    # a current into the first node, read there (every file has a node, few
    # an input): H, its table and the step, and every node's step
    "response": [["--to", "{node}", "--inject", "{node}", "--step", "--points", "20"],
                 ["--to", "{node}", "--inject", "{node}", "--points", "20", "--csv", "-"],
                 ["--to", "{node}", "--inject", "each"]],
}

# The commands that only draw refuse --json (exit 2): not run with it.
PICTURES = ("roots", "polar")

# Files that take a second or more an analysis (128 nodes, 65,536 elements or
# params, 8 MiB, 200,000 lines) get only the reports of one analysis.
HEAVY = ("chain128", "file_size_at", "lines_at", "elements_at", "params_at")
ONE_ANALYSIS = ("check", "gain")

# A token that is a non-finite number as C, Python or JavaScript print it.
BAD = re.compile(r"(?<![A-Za-z0-9_])[-+]?(nan|inf|infinity)(?![A-Za-z0-9_])", re.I)

SPECIAL = {
    # T(0) = 0.5: the loop gain never reaches 0 dB, so there is no crossover
    # and no phase margin anywhere; a spread on it makes every Monte Carlo
    # sample and corner fail with empty statistics.
    "no_crossover": """param g = 0.5m corners -10%..+10% normal 5%
node a r=10k c=1p
node b r=100 c=1p
gm ga a -> b -g
gm gb b -> a 1m
cap cx a b 0.1p
res rx b gnd 1M
loop main negative a b
""",
    # An integrator in the loop: T(0) is unbounded.
    "integrator": """param c0 = 1p corners 0.5p..2p normal 10%
node a r=inf c=c0
node b r=10k c=1p
gm ga a -> b -1m
gm gb b -> a 1m
cap cx a b 0.1p
res rx b gnd 1M
loop main negative a b
""",
    # A zero at s = 0 (AC coupling): T(0) = 0.
    "ac_coupled": """param cc = 10p corners -20%..+20% uniform 5p..20p
node a r=10k c=1p
node m r=10k c=1p
node b r=10k c=1p
gm ga a -> m -1m
cap cx m b cc
gm gb b -> a 1m
res rx b gnd 1M
loop main negative a m b
""",
}


def files(scratch):
    out = sorted("cases/" + f for f in os.listdir("cases") if f.endswith(".loop"))
    for d in ("tests/ref/nets", "tests/ref/extreme", "tests/ref/large"):
        out += sorted(os.path.join(d, f) for f in os.listdir(d) if f.endswith(".loop"))
    lim = os.path.join(scratch, "limits")
    subprocess.run([PY, "tests/limits/gen.py", lim], check=True)
    # every file at its limit but the 4096-node one (minutes an analysis)
    for name in ("tokens", "name", "loops", "nesting", "corners", "line_bytes", "file_size",
                 "lines", "elements", "params"):
        out.append(os.path.join(lim, name + "_at.loop"))
    for name, text in SPECIAL.items():
        path = os.path.join(scratch, name + ".loop")
        with open(path, "w") as f:
            f.write(text)
        out.append(path)
    return out


def names(path):
    """The first cap, res and node of the file, for the commands' arguments."""
    got = {}
    with open(path, encoding="utf-8") as f:
        for line in f:
            t = line.split("#")[0].split()
            if len(t) >= 2 and t[0] in ("cap", "res", "node") and t[0] not in got:
                got[t[0]] = t[1]
    return got


def with_spread(path, scratch):
    """The file with its first cap or res (else its first gm) scaled by a
    factor with corners and a distribution, so that corners and montecarlo have something to
    vary; a file that has spreads of its own is left as it is."""
    with open(path, encoding="utf-8") as f:
        lines = f.read().split("\n")
    toks = [line.split("#")[0].split() for line in lines]
    if any(w in ("corners", "normal", "uniform") for t in toks for w in t):
        return path
    at = [i for i, t in enumerate(toks) if len(t) >= 5 and t[0] in ("cap", "res")]
    at += [i for i, t in enumerate(toks) if len(t) >= 6 and t[0] == "gm"]
    if not at:
        return path
    i = at[0]
    head = 4 if toks[i][0] != "gm" else 5
    # a factor on the value: a percentage of a negative nominal would invert the range
    lines[i] = " ".join(toks[i][:head] + ["lw_spread*(%s)" % " ".join(toks[i][head:])])
    lines.insert(i, "param lw_spread = 1 corners -30%..+30% normal 10%")
    out = os.path.join(scratch, "spread_" + os.path.basename(path))
    with open(out, "w") as f:
        f.write("\n".join(lines))
    return out


def parts(target, scratch):
    """The two parts of a 40-sample Monte Carlo run of target, for --merge
    (written now; a file that refuses a run gives a missing file, which the
    merge refuses too)."""
    out = []
    for k in (1, 2):
        csv = os.path.join(scratch, "part%d_%s.csv" % (k, os.path.basename(target)))
        subprocess.run([LW, "montecarlo", target, "--samples", "40", "--seed", "3", "--part",
                        "%d/2" % k, "--samples-out", csv], capture_output=True, timeout=300)
        out.append(csv)
    return out


def runs(scratch):
    for path in files(scratch):
        n = names(path)
        for cmd, variants in COMMANDS.items():
            for args in variants:
                spread = cmd in ("corners", "montecarlo") or "--over" in args
                target = with_spread(path, scratch) if spread else path
                try:
                    a = [x.format(cap=n["cap"], res=n["res"], node=n["node"],
                                  png=os.path.join(scratch, "p%d.png" % os.getpid()),
                                  csv=os.path.join(scratch, "s%d.csv" % os.getpid()))
                         if "{" in x and x != "{parts}" else x for x in args]
                except KeyError:
                    continue
                if any(h in path for h in HEAVY) and cmd not in ONE_ANALYSIS:
                    continue  # seconds an analysis: the commands that run one suffice
                if "{parts}" in a:
                    a = a[:a.index("{parts}")] + parts(target, scratch) + a[a.index("{parts}") + 1:]
                for json in ([], ["--json"]):
                    if json and ("--csv" in a or cmd in PICTURES):
                        continue
                    yield [LW, cmd, target] + a + json


def one(argv):
    p = subprocess.run(argv, capture_output=True, text=True, errors="replace", timeout=300)
    where = []
    if p.returncode not in (0, 1, 2):
        where.append("exit %d" % p.returncode)
    if p.returncode == 2 and p.stdout:
        where.append("stdout after a refusal")
    for name, text in (("stdout", p.stdout), ("stderr", p.stderr if p.returncode < 2 else "")):
        for m in BAD.finditer(text):
            line = text[:m.start()].count("\n")
            where.append("%s line %d: %r" % (name, line + 1, text.split("\n")[line][:120]))
            break
    return argv, p.returncode, where


def help_commands():
    """The commands `loopwise --help` lists, so that a new one cannot be
    missed here."""
    text = subprocess.run([LW, "--help"], capture_output=True, text=True).stdout
    block = text.split("commands:\n", 1)[1].split("\n\n", 1)[0]
    return [line.split()[0] for line in block.split("\n")
            if re.match(r"  [a-z]", line) and not line.startswith("   ")]


def main():
    missing = [c for c in help_commands() if c not in COMMANDS]
    if missing:
        print("FAIL commands of --help not in COMMANDS: %s" % ", ".join(missing))
        print("0 passed, 1 failed")
        return 1
    with tempfile.TemporaryDirectory() as scratch:
        jobs = list(runs(scratch))
        failed = 0
        codes = {}
        with concurrent.futures.ThreadPoolExecutor(max_workers=2) as ex:
            for argv, rc, where in ex.map(one, jobs):
                codes[rc] = codes.get(rc, 0) + 1
                if where:
                    failed += 1
                    print("FAIL", " ".join(argv[1:]).replace(scratch, "TMP"), "->", "; ".join(where))
    print("finite: %d runs (exit codes %s), %d with a non-finite token" %
          (len(jobs), ", ".join("%d: %d" % kv for kv in sorted(codes.items())), failed))
    print("%d passed, %d failed" % (len(jobs) - failed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
