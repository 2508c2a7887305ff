#!/usr/bin/python3
"""Writes the inputs of the limits tests into OUTDIR:

    /usr/bin/python3 tests/limits/gen.py OUTDIR

For each documented limit (README, "Limits") NAME_at.loop sits exactly at
the limit and must be accepted, NAME_over.loop is one past it and must be
refused with exit 2. Every file is a small, quick network (two nodes in one
negative loop) plus what reaches the limit, so that only that limit is
tested: the big files are mostly comment lines, many elements sit in
parallel between the same two nodes, and so on. The networks are invented
for these tests.
"""

import os
import sys

BASE = [
    "node a r=10k c=1p",
    "node b r=10k c=1p",
    "gm ga a -> b -1m",
    "gm gb b -> a 1m",
]
LOOP = "loop main negative a b"


def lines_file(extra_before=(), extra_after=(), loop=True):
    """BASE, the extra declarations and the loop, one per line."""
    return list(extra_before) + BASE + list(extra_after) + ([LOOP] if loop else [])


def pad_to_bytes(body, total, width=4096):
    """body lines, then comment lines of up to `width` bytes (LF included in
    the total, not in the width) until the file is exactly `total` bytes."""
    text = "".join(l + "\n" for l in body)
    out = [text]
    left = total - len(text)
    while left > 0:
        n = min(width + 1, left)       # bytes of this line, LF included
        if n == 1:                     # a lone LF would do, but keep it a comment
            out.append("\n")
        else:
            out.append("#" + "x" * (n - 2) + "\n")
        left -= n
    data = "".join(out)
    assert len(data.encode()) == total, (len(data), total)
    return data


def write(outdir, name, text):
    with open(os.path.join(outdir, name), "w", newline="") as f:
        f.write(text if isinstance(text, str) else "".join(l + "\n" for l in text))


def main():
    outdir = sys.argv[1]
    os.makedirs(outdir, exist_ok=True)

    # file size: 8 MiB exactly, and one byte more (lines of 4096 bytes)
    mib8 = 8 << 20
    write(outdir, "file_size_at.loop", pad_to_bytes(lines_file(), mib8))
    write(outdir, "file_size_over.loop", pad_to_bytes(lines_file(), mib8 + 1))

    # lines: 200,000 lines (the network, then '#' lines), and 200,001
    body = lines_file()
    write(outdir, "lines_at.loop", body + ["#"] * (200000 - len(body)))
    write(outdir, "lines_over.loop", body + ["#"] * (200001 - len(body)))

    # one line of 4096 bytes (a declaration padded with a comment), and 4097
    def long_line(n):
        decl = "res rlong a b 1M   #"
        return decl + "y" * (n - len(decl))
    write(outdir, "line_bytes_at.loop", lines_file(extra_after=[long_line(4096)]))
    write(outdir, "line_bytes_over.loop", lines_file(extra_after=[long_line(4097)]))

    # tokens on one line: a param whose value is 1 + 1 + ... (512 tokens), and 513
    def many_tokens(n):
        toks = ["param", "ptok", "="]
        k = n - len(toks)              # the expression: terms and '+' signs,
        lead = ["-"] if k % 2 == 0 else []   # led by a unary minus when k is even
        toks += lead + " + ".join(["1"] * ((k - len(lead) + 1) // 2)).split()
        assert len(toks) == n
        return " ".join(toks)
    write(outdir, "tokens_at.loop", lines_file(extra_before=[many_tokens(512)]))
    write(outdir, "tokens_over.loop", lines_file(extra_before=[many_tokens(513)]))

    # names: a node named with 64 characters (used in the loop), and 65
    def long_name(n):
        nm = "n" + "x" * (n - 1)
        return lines_file(extra_after=["node %s r=1k c=1p" % nm, "res rn b %s 1k" % nm])
    write(outdir, "name_at.loop", long_name(64))
    write(outdir, "name_over.loop", long_name(65))

    # nodes: 4096 and 4097, each tied to the loop through its own resistor.
    # A network this big is slow to analyse (dense matrices), so the test
    # only checks that the file gets past the parser (see limits.sh).
    def many_nodes(n):
        extra = []
        for k in range(n - 2):
            extra += ["node m%d r=1k" % k, "res rm%d a m%d 1k" % (k, k)]
        return lines_file(extra_after=extra)
    write(outdir, "nodes_at.loop", many_nodes(4096))
    write(outdir, "nodes_over.loop", many_nodes(4097))

    # elements: 65,536 (the two gms, then resistors in parallel from a to
    # b), and 65,537: the network stays two nodes, so the analysis is quick
    def many_elems(n):
        return lines_file(extra_after=["res re%d a gnd 100M" % k for k in range(n - 2)])
    write(outdir, "elements_at.loop", many_elems(65536))
    write(outdir, "elements_over.loop", many_elems(65537))

    # params: 65,536 and 65,537, each the one before it plus nothing
    def many_params(n):
        ps = ["param p0 = 1k"] + ["param p%d = p%d" % (k, k - 1) for k in range(1, n)]
        return ps + lines_file(extra_after=["res rp a gnd p%d" % (n - 1)])
    write(outdir, "params_at.loop", many_params(65536))
    write(outdir, "params_over.loop", many_params(65537))

    # loops: 256 declared loops (all the same path), and 257
    def many_loops(n):
        return BASE + ["loop l%d negative a b" % k for k in range(n)]
    write(outdir, "loops_at.loop", many_loops(256))
    write(outdir, "loops_over.loop", many_loops(257))

    # nesting: 64 levels, the whole value counting as the first, so 63
    # nested parentheses; and 65 levels (64 parentheses)
    def nested(levels):
        k = levels - 1
        return lines_file(extra_before=["param pn = " + "(" * k + "1k" + ")" * k],
                          extra_after=["res rnest a gnd pn"])
    write(outdir, "nesting_at.loop", nested(64))
    write(outdir, "nesting_over.loop", nested(65))

    # corners: 12 params with a corner range (4096 corners), and 13; each
    # scales one resistor a little
    def ranged(n):
        ps = ["param q%d = 1 corners 0.9..1.1" % k for k in range(n)]
        prod = "*".join("q%d" % k for k in range(n))
        return ps + lines_file(extra_after=["res rq a gnd 100k*" + prod])
    write(outdir, "corners_at.loop", ranged(12))
    write(outdir, "corners_over.loop", ranged(13))


if __name__ == "__main__":
    main()
