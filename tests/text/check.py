#!/usr/bin/python3
"""The reader's byte rules (src/text.c, text_find_bad_byte) against Python's
own UTF-8 decoder and Unicode character database.

    /usr/bin/python3 tests/text/check.py BUILD/tests/text_bytes

For each byte string of tests/text/bytes.c (built here in the same order),
the first bad byte must be where Python says: the start of the first
sequence its strict UTF-8 decoder refuses (Python follows the Unicode
standard's well-formed sequences: no overlong forms, no surrogates, nothing
past U+10FFFF), or else the first character of general category Cc (the C0
controls, DEL and the C1 controls) other than tab. -1 when there is none.
"""
import subprocess
import sys
import unicodedata

THIRD = [0x00, 0x09, 0x41, 0x7F, 0x80, 0x9F, 0xA0, 0xBF, 0xC0, 0xFF]
FOURTH = [0x41, 0x80, 0xBF]


def strings():
    for a in range(256):
        yield bytes([a])
    for a in range(256):
        for b in range(256):
            yield bytes([a, b])
    for a in range(0xE0, 0xF0):
        for b in range(256):
            for c in THIRD:
                yield bytes([a, b, c])
    for a in range(0xF0, 0xF8):
        for b in range(256):
            for c in FOURTH:
                for d in FOURTH:
                    yield bytes([a, b, c, d])


def first_bad(s):
    try:
        text = s.decode("utf-8", errors="strict")
    except UnicodeDecodeError as e:
        good = s[:e.start].decode("utf-8")
        text, limit = good, e.start
    else:
        limit = None
    off = 0
    for ch in text:
        if ch != "\t" and unicodedata.category(ch) == "Cc":
            return off
        off += len(ch.encode("utf-8"))
    return -1 if limit is None else limit


def main():
    out = subprocess.run([sys.argv[1]], capture_output=True, check=True, text=True).stdout.split()
    cases = list(strings())
    bad = [(s.hex(" "), int(got), first_bad(s)) for s, got in zip(cases, out)
           if int(got) != first_bad(s)]
    ok = len(out) == len(cases) and not bad
    accepted = sum(1 for g in out if g == "-1")
    print("%s %d byte strings, %d accepted: first bad byte as Python's UTF-8 decoder and "
          "Unicode's Cc category say%s" % ("PASS" if ok else "FAIL", len(cases), accepted,
                                           "" if ok else "; differ: %s" % bad[:8]))
    print("%d passed, %d failed" % (ok, not ok))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
