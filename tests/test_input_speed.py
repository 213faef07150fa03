"""The fast paths of reading (no timing here: speed is measured by benchmarks/input_speed.py).

A CSV file whose text has nothing any cell could be trimmed of skips the per-cell trim
(``netopt.data.io._may_need_trim``).  Reference: the trimming path itself (``str.strip``, whose white
space is ``str.isspace``, Python documentation, "Built-in Types"), run on the same records.
"""

from __future__ import annotations

import csv
import io
import random

from netopt.data import io as case_io
from netopt.data.records import frame_from_records

# Line ends of every kind the csv reader splits on, white space that str.strip removes (also the
# separators \x1c and \x85 and Unicode spaces), a byte-order mark and a quote.
PIECES = ["a", "b", "1", ",", ",", "\n", "\r\n", "\r", " ", "\t", "\x0b", "\x1c", "\xa0", "\u2003", "\x85"]
PIECES += ["\ufeff", '"', "x"]


def _records(text: str):
    reader = csv.reader(io.StringIO(text, newline=""))
    out, last = [], 0
    for cells in reader:
        out.append((last + 1, cells))
        last = reader.line_num
    return out


def test_skipping_the_trim_reads_the_same_table():
    rng = random.Random(1)
    skipped = 0
    for _ in range(4000):
        text = "h1,h2,h3\n" + "".join(rng.choice(PIECES) for _ in range(rng.randint(0, 30)))
        try:
            recs = _records(text)
        except csv.Error:
            continue
        fast = not case_io._may_need_trim(text)
        skipped += fast
        want, want_probs = frame_from_records("t", [(n, list(c)) for n, c in recs], trimmed=False)
        got, got_probs = frame_from_records("t", [(n, list(c)) for n, c in recs], trimmed=fast)
        assert [str(p) for p in got_probs] == [str(p) for p in want_probs], repr(text)
        if want is None:
            assert got is None, repr(text)
        else:
            assert got is not None and got.equals(want) and list(got.columns) == list(want.columns), repr(text)
    assert skipped > 100  # the fast path was taken often enough to mean something


def test_what_needs_the_trim():
    assert not case_io._may_need_trim("origin,destination\nD1,C1\r\nD2,C2\n")
    assert not case_io._may_need_trim("name,note\nD1,two words inside\n")
    for text in ("a,b\nD1 ,C1\n", "a,b\n D1,C1\n", "a,b\r\nD1,C1 \r\n", "a,b\rD1,\tC1\r", '"a",b\n', "\ufeffa,b\n"):
        assert case_io._may_need_trim(text), repr(text)
