"""Readers and writers, checked against SciPy's own readers and hand-written files."""

from __future__ import annotations

import gzip

import numpy as np
import pytest
import scipy.io
import scipy.sparse as sp

from reorder.errors import InputError
from reorder.io import (
    check_permutation,
    matrix_name,
    read_matrix,
    read_permutation,
    write_matrix,
    write_permutation,
)

from conftest import grid2d


def write(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_symmetric_real_expands_both_triangles(tmp_path):
    p = write(tmp_path, "a.mtx", "%%MatrixMarket matrix coordinate real symmetric\n3 3 4\n1 1 2\n2 1 -1\n3 3 4\n3 2 0.5\n")
    A = read_matrix(p).toarray()
    ref = np.array([[2, -1, 0], [-1, 0, 0.5], [0, 0.5, 4]])
    np.testing.assert_array_equal(A, ref)


def test_skew_hermitian_pattern_integer(tmp_path):
    skew = write(tmp_path, "s.mtx", "%%MatrixMarket matrix coordinate real skew-symmetric\n2 2 1\n2 1 3\n")
    np.testing.assert_array_equal(read_matrix(skew).toarray(), [[0, -3], [3, 0]])
    herm = write(tmp_path, "h.mtx", "%%MatrixMarket matrix coordinate complex hermitian\n2 2 2\n1 1 1 0\n2 1 1 2\n")
    np.testing.assert_array_equal(read_matrix(herm).toarray(), [[1, 1 - 2j], [1 + 2j, 0]])
    pat = write(tmp_path, "p.mtx", "%%MatrixMarket matrix coordinate pattern general\n2 2 2\n1 2\n2 1\n")
    assert read_matrix(pat).nnz == 2
    integer = write(tmp_path, "i.mtx", "%%MatrixMarket matrix coordinate integer general\n2 2 2\n1 1 5\n2 2 7\n")
    np.testing.assert_array_equal(read_matrix(integer).toarray(), [[5, 0], [0, 7]])


def test_array_format(tmp_path):
    p = write(tmp_path, "d.mtx", "%%MatrixMarket matrix array real general\n2 2\n1\n0\n3\n4\n")
    np.testing.assert_array_equal(read_matrix(p).toarray(), [[1, 3], [0, 4]])  # column-major


def test_explicit_zeros_kept_unless_dropped_and_duplicates_summed(tmp_path):
    p = write(tmp_path, "z.mtx", "%%MatrixMarket matrix coordinate real general\n3 3 5\n1 1 1\n2 2 0\n3 3 1\n3 1 2\n3 1 3\n")
    A = read_matrix(p)
    assert A.nnz == 4 and A[2, 0] == 5  # duplicate (3,1) summed, zero kept
    assert read_matrix(p, drop_zeros=True).nnz == 3


def test_gzip_matches_scipy(tmp_path):
    A = sp.random(30, 30, density=0.1, random_state=1, format="coo")
    plain = tmp_path / "r.mtx"
    scipy.io.mmwrite(str(plain), A)
    gz = tmp_path / "r.mtx.gz"
    gz.write_bytes(gzip.compress(plain.read_bytes()))
    ref = sp.csr_matrix(scipy.io.mmread(str(plain)))  # reference: SciPy's reader
    assert (read_matrix(gz) != ref).nnz == 0
    assert matrix_name(gz) == "r"


@pytest.mark.filterwarnings("error::pytest.PytestUnraisableExceptionWarning")
def test_gzip_reader_closes_the_file(tmp_path):
    # closing a gzip stream does not close the file under it (Python's gzip docs): the reader must
    import gc
    import warnings

    gz = tmp_path / "r.mtx.gz"
    gz.write_bytes(gzip.compress(b"%%MatrixMarket matrix coordinate real general\n2 2 2\n1 1 1\n2 2 1\n"))
    with warnings.catch_warnings():
        warnings.simplefilter("error", ResourceWarning)
        read_matrix(gz)
        gc.collect()  # an unclosed file would warn here


def test_harwell_boeing_and_npz(tmp_path):
    A = sp.csr_matrix(grid2d(4))
    hb = tmp_path / "g.rua"
    scipy.io.hb_write(str(hb), sp.csc_matrix(A))
    assert (read_matrix(hb) != A).nnz == 0
    # symmetric HB (RSA) stores one triangle: patch the type of a lower-triangle file
    low = tmp_path / "low.rua"
    scipy.io.hb_write(str(low), sp.csc_matrix(sp.tril(A)))
    text = low.read_text().splitlines(keepends=True)
    text[2] = "RSA" + text[2][3:]
    rsa = tmp_path / "g.rsa"
    rsa.write_text("".join(text))
    assert abs(read_matrix(rsa) - A).max() == 0
    npz = tmp_path / "g.npz"
    sp.save_npz(npz, A)
    assert (read_matrix(npz) != A).nnz == 0


@pytest.mark.parametrize(
    "text,fragment",
    [
        ("", "empty"),
        ("hello world\n", "not a Matrix Market"),
        ("%%MatrixMarket matrix coordinate real general\n", "size line"),
        ("%%MatrixMarket matrix coordinate real general\n2 3 1\n1 1 1\n", "not square"),
        ("%%MatrixMarket matrix coordinate real general\n-2 -2 1\n1 1 1\n", "negative"),
        ("%%MatrixMarket matrix coordinate real general\n1000000000000 1000000000000 1\n1 1 1\n", "too large"),
        ("%%MatrixMarket matrix coordinate real general\n3 3 4\n1 1 1\n", "runcated"),
        ("%%MatrixMarket matrix coordinate real general\n2 2 1\n5 5 1\n", "malformed"),
        ("%%MatrixMarket matrix coordinate real general\n2 2 1\n1 1 abc\n", "malformed"),
        ("%%MatrixMarket matrix blob real general\n2 2 1\n1 1 1\n", "format"),
    ],
)
def test_bad_matrix_files_one_line_errors(tmp_path, text, fragment):
    p = write(tmp_path, "bad.mtx" if text else "empty.mtx", text)
    with pytest.raises(InputError) as exc:
        read_matrix(p)
    msg = str(exc.value)
    assert "\n" not in msg and fragment in msg and str(p) in msg


def test_missing_and_garbage_gz(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        read_matrix(tmp_path / "nope.mtx")
    g = tmp_path / "junk.mtx.gz"
    g.write_bytes(b"\x00\x01garbage")
    with pytest.raises(InputError):
        read_matrix(g)


def test_write_matrix_round_trip(tmp_path):
    A = grid2d(5)
    for name in ("o.mtx", "o.mtx.gz", "o.npz"):
        write_matrix(tmp_path / name, A)
        assert abs(read_matrix(tmp_path / name) - A).max() == 0
    assert not list(tmp_path.glob(".*tmp*"))  # no temporary files left


def test_permutation_round_trips(tmp_path):
    perm = np.random.default_rng(0).permutation(17)
    for base in (0, 1):
        f = tmp_path / f"p{base}.txt"
        write_permutation(f, perm, base=base, header=["made by a test"])
        lines = f.read_text().splitlines()
        body = [ln for ln in lines if not ln.startswith("#")]
        assert lines[0].startswith("#") and int(body[0]) == perm[0] + base and "# made by a test" in lines
        np.testing.assert_array_equal(read_permutation(f, 17), perm)  # base detected
    f = tmp_path / "p.npy"
    write_permutation(f, perm)
    np.testing.assert_array_equal(read_permutation(f, 17), perm)


@pytest.mark.parametrize(
    "content,fragment",
    [
        ("0\n1\n2\n", "3 entries"),
        ("0\n1\n1\n3\n", "appears"),
        ("0\n1\n2\n9\n", "out of range"),
        ("0\n1\nx\n3\n", "not an integer"),
        ("0\n1.5\n2\n3\n", "not an integer"),
        ("", "empty"),
        ("# only a comment\n", "empty"),
        ("0\n4\n2\n3\n", "out of range"),
    ],
)
def test_bad_permutations(tmp_path, content, fragment):
    f = tmp_path / "bad.txt"
    f.write_text(content)
    with pytest.raises(InputError) as exc:
        read_permutation(f, 4)
    assert fragment in str(exc.value) and "\n" not in str(exc.value)


def test_check_permutation_types():
    with pytest.raises(InputError):
        check_permutation(np.array([0.5, 1.0]))
    with pytest.raises(InputError):
        check_permutation(np.array(["a"]))
    assert check_permutation([1.0, 0.0]).tolist() == [1, 0]


def test_atomic_write_missing_folder(tmp_path):
    with pytest.raises(InputError, match="output folder does not exist"):
        write_permutation(tmp_path / "nope" / "p.txt", [0, 1])


def test_size_line_with_a_no_break_space(tmp_path):
    # found by the mutation fuzzer: str.split() separates on U+00A0 (Python's str docs), so the size
    # line parsed, and then the reader crashed writing it back as ASCII; reference: SciPy's reader on
    # the same file with a plain space
    body = "%%MatrixMarket matrix coordinate real general\n2 2{}2\n1 1 1\n2 2 3\n"
    plain = tmp_path / "plain.mtx"
    plain.write_text(body.format(" "), encoding="latin-1")
    odd = tmp_path / "odd.mtx"
    odd.write_text(body.format("\xa0"), encoding="latin-1")
    ref = sp.csr_matrix(scipy.io.mmread(str(plain)))
    assert (read_matrix(odd) != ref).nnz == 0
