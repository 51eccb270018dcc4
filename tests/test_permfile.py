"""Permutation files: the header (direction, base, n) honoured by the reader, strict tokens, escaped errors.

The reference for what a permutation does is NumPy fancy indexing: ``A[p][:, p]`` for a new-to-old list,
and ``inv[p[k]] = k`` for its inverse (textbook fact), checked against the matrix, not against our reader.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from reorder.errors import InputError
from reorder.io import permutation_header, read_permutation, read_permutation_file, write_permutation

from conftest import grid2d


@pytest.mark.parametrize("direction,base", list(itertools.product(["new-to-old", "old-to-new"], [0, 1])))
def test_round_trip_every_direction_and_base(tmp_path, direction, base):
    perm = np.random.default_rng(3).permutation(23)
    f = tmp_path / "p.txt"
    write_permutation(f, perm, base=base, direction=direction, method="test", seed=1)
    text = f.read_text()
    assert text.splitlines()[0] == f"# reorder permutation: direction={direction} base={base} n=23"
    raw = np.array([int(t) for t in text.splitlines() if not t.startswith("#")]) - base
    # what is stored, by the textbook definition of the inverse
    expect = perm if direction == "new-to-old" else np.argsort(perm)
    np.testing.assert_array_equal(raw, expect)
    np.testing.assert_array_equal(read_permutation(f, 23), perm)
    # the caller agreeing with the header is fine; contradicting it is an error
    np.testing.assert_array_equal(read_permutation(f, 23, base=base, direction=direction), perm)
    other = "old-to-new" if direction == "new-to-old" else "new-to-old"
    with pytest.raises(InputError, match="header says direction"):
        read_permutation(f, 23, direction=other)
    with pytest.raises(InputError, match="header says base"):
        read_permutation(f, 23, base=1 - base)
    with pytest.raises(InputError, match="header says n=23"):
        read_permutation(f, 22)
    # the permuted matrix built from the file is the one built from perm (NumPy indexing)
    A = grid2d(3, 8)[:23][:, :23]
    p = read_permutation(f, 23)
    assert abs(A[p][:, p] - A[perm][:, perm]).max() == 0


def test_headerless_file_reads_as_before(tmp_path):
    perm = np.random.default_rng(0).permutation(11)
    for base in (0, 1):
        f = tmp_path / f"h{base}.txt"
        f.write_text("# some other comment\n" + "\n".join(str(v + base) for v in perm) + "\n")
        np.testing.assert_array_equal(read_permutation(f, 11), perm)  # base detected, new-to-old
        pf = read_permutation_file(f)
        assert not pf.has_header and pf.direction is None
        # --inverse on a headerless file: the list is taken as old-to-new
        np.testing.assert_array_equal(read_permutation(f, 11, direction="old-to-new"), np.argsort(perm))


def test_header_n_must_match_the_entries(tmp_path):
    f = tmp_path / "p.txt"
    f.write_text("# reorder permutation: direction=new-to-old base=0 n=4\n0\n1\n2\n")
    with pytest.raises(InputError, match="holds 3 entries"):
        read_permutation(f)
    f.write_text("# reorder permutation: direction=sideways base=0 n=3\n0\n1\n2\n")
    with pytest.raises(InputError, match="sideways"):
        read_permutation(f)


@pytest.mark.parametrize("token", ["1_0", "\uff11", "+1", "1e1", " 0x1"])
def test_only_ascii_digits(tmp_path, token):
    # Python's int() accepts '1_0', '+1' and full-width digits: the file format does not.
    f = tmp_path / "p.txt"
    f.write_text(f"0\n{token}\n2\n", encoding="utf-8")
    with pytest.raises(InputError) as exc:
        read_permutation(f, 3)
    msg = str(exc.value)
    assert "line 2" in msg and "plain ASCII digits" in msg and "\n" not in msg
    assert msg.isascii()
    if token == "\uff11":
        assert "\\uff11" in msg and "non-ASCII digits" in msg


def test_bom_is_skipped(tmp_path):
    f = tmp_path / "p.txt"
    f.write_bytes(b"\xef\xbb\xbf2\n0\n1\n")
    assert read_permutation(f, 3).tolist() == [2, 0, 1]
    write_permutation(f, [2, 0, 1])
    f.write_bytes(b"\xef\xbb\xbf" + f.read_bytes())  # a BOM before the header line too
    assert read_permutation_file(f).has_header and read_permutation(f, 3).tolist() == [2, 0, 1]


def test_raw_bytes_are_escaped_in_errors(tmp_path):
    f = tmp_path / "p.txt"
    f.write_bytes(b"0\n1\x00\x1b[31m\xff\xfe\n2\n")
    with pytest.raises(InputError) as exc:
        read_permutation(f, 3)
    msg = str(exc.value)
    assert "\\x00" in msg and "\\x1b" in msg and "\\xff" in msg
    assert all(ch.isprintable() and ch.isascii() for ch in msg)


def test_header_lines_shared():
    lines = permutation_header(direction="old-to-new", base=1, n=5, method="nd", seed=2, matrix="plate.mtx")
    assert lines[0] == "reorder permutation: direction=old-to-new base=1 n=5"
    assert "new position of old index" in lines[1] and "method=nd seed=2 matrix=plate.mtx" in lines[2]
    with pytest.raises(InputError):
        permutation_header(direction="up", n=3)
