"""Hostile input, round two (issue 19): one test per row of the issue's table, each in a temporary
folder. Expected behaviour is the project rule (DEVELOPERS.md): a user error ends in exit 2 with one
line on stderr and no traceback; nothing that is not a regular file is replaced; no temporary is left.

Rows that could crash or hang the interpreter run in a subprocess with a timeout.
"""

from __future__ import annotations

import gzip
import io
import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest
import scipy.io
import scipy.sparse as sp

from reorder.cli import main
from reorder.io import atomic_path, read_matrix

HDR = "%%MatrixMarket matrix coordinate real general\n"
PATH3 = HDR + "3 3 5\n1 1 4\n2 1 -1\n2 2 4\n3 2 -1\n3 3 4\n"  # lower-triangle-ish pattern, general
ROOT = hasattr(os, "geteuid") and os.geteuid() == 0


def _cli(*args, timeout=60, stdin=None, env_extra=None):
    """Run the command line in a subprocess; (rc, stdout bytes, stderr text)."""
    env = dict(os.environ, **(env_extra or {}))
    p = subprocess.run([sys.executable, "-m", "reorder.cli", *map(str, args)], input=stdin, capture_output=True,
                       timeout=timeout, env=env)
    return p.returncode, p.stdout, p.stderr.decode("utf-8", "replace")


def _run(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def _one_line(err: str):
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert all(ch >= " " for ch in lines[0]), repr(lines[0])  # nothing raw
    return lines[0]


def _hb(path: Path, index_line: str | None = None):
    A = sp.csc_matrix(np.array([[4.0, 1, 0], [1, 4, 1], [0, 1, 4]]))
    scipy.io.hb_write(str(path), A)
    if index_line is not None:
        lines = path.read_text().split("\n")
        lines[5] = index_line
        path.write_text("\n".join(lines))
    return path


# ---- the table, row by row -------------------------------------------------------------------
@pytest.mark.parametrize("kind", ["mtx", "gz", "pattern"])
def test_nul_byte_after_entry_is_refused_with_line_number(tmp_path, capsys, kind):
    # row 1: SciPy's parser crashed (rc 139) on a NUL after an entry; now refused before parsing
    text = (PATH3 if kind != "pattern" else
            "%%MatrixMarket matrix coordinate pattern general\n3 3 3\n1 1\n2 2\n3 3\n").encode()
    lines = text.split(b"\n")
    lines[3] = lines[3] + b"\x00"
    data = b"\n".join(lines)
    f = tmp_path / ("m.mtx.gz" if kind == "gz" else "m.mtx")
    f.write_bytes(gzip.compress(data) if kind == "gz" else data)
    rc, out, err = _run(capsys, "stats", f)
    assert rc == 2
    line = _one_line(err)
    assert "line 4" in line and "\\x00" in line


@pytest.mark.parametrize("bad", ["0", "4"])
@pytest.mark.parametrize("cmd", [("stats",), ("order", "-m", "natural"), ("order", "-m", "spectral"),
                                 ("order", "-m", "nd")])
def test_hb_row_index_outside_matrix(tmp_path, capsys, bad, cmd):
    # row 2: the entry was silently dropped (stats) or the process crashed (order)
    f = _hb(tmp_path / "m.rua", f" 1 2 1 2 3 2 {bad}")
    extra = ("-o", tmp_path / "p.txt") if cmd[0] == "order" else ()
    rc, out, err = _run(capsys, *cmd[:1], f, *cmd[1:], *extra)
    assert rc == 2, err
    assert f"row index {bad} outside 1..3" in _one_line(err)
    assert not (tmp_path / "p.txt").exists()


def test_hb_valid_file_still_reads(tmp_path):
    # the checked reader agrees with SciPy's own reader on a valid file (reference: scipy.io.hb_read)
    f = _hb(tmp_path / "m.rua")
    A = read_matrix(f)
    assert (A != sp.csr_matrix(scipy.io.hb_read(str(f)))).nnz == 0


@pytest.mark.parametrize("n", [200_000_000, 50_000_000])
def test_absurd_declared_size_costs_seconds(tmp_path, capsys, n):
    # row 3: 143 s and 16 GB before; now refused from the header
    f = tmp_path / "big.mtx"
    f.write_text(HDR + f"{n} {n} 1\n1 1 1\n")
    t0 = time.perf_counter()
    rc, out, err = _run(capsys, "order", f, "-o", tmp_path / "p.txt", "-m", "rcm")
    assert rc == 2 and time.perf_counter() - t0 < 5
    assert "use --max-memory to override" in _one_line(err)
    assert not (tmp_path / "p.txt").exists()


def test_memory_refusal_message_and_override(tmp_path, capsys):
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    rc, out, err = _run(capsys, "stats", f, "--max-memory", "1K")
    assert rc == 2
    line = _one_line(err)
    assert "needs about" in line and "GiB available; use --max-memory to override" in line
    rc, out, err = _run(capsys, "stats", f, "--max-memory=1G")
    assert rc == 0, err
    os.environ.pop("REORDER_MAX_MEMORY", None)


def _npz(path, **arrays):
    np.savez(path, **arrays)
    return path


@pytest.mark.parametrize("case", ["coo_huge_shape", "csr_indptr_expands", "csr_col_out_of_range",
                                  "csr_negative_col", "csr_string_data", "csr_decreasing_indptr", "object_data"])
def test_npz_hostile(tmp_path, capsys, case):
    # rows 4, 8, 9: no size check (11-15 GB), tracebacks, and an abort (rc 134) before
    f = tmp_path / "m.npz"
    i64 = np.int64
    csr = dict(format=b"csr", shape=np.array([3, 3], i64), indptr=np.array([0, 1, 2, 3], i64),
               indices=np.array([0, 1, 2], i64), data=np.ones(3))
    if case == "coo_huge_shape":
        _npz(f, format=b"coo", shape=np.array([2 * 10**9] * 2, i64), row=np.array([0], i64),
             col=np.array([0], i64), data=np.ones(1))
    elif case == "csr_indptr_expands":
        _npz(f, **{**csr, "indptr": np.array([0, 1, 2, 3 * 10**8], i64)})
    elif case == "csr_col_out_of_range":
        _npz(f, **{**csr, "indices": np.array([0, 1, 7], i64)})
    elif case == "csr_negative_col":
        _npz(f, **{**csr, "indices": np.array([0, -1, 2], i64)})
    elif case == "csr_string_data":
        _npz(f, **{**csr, "data": np.array(["a", "b", "c"])})
    elif case == "csr_decreasing_indptr":
        _npz(f, **{**csr, "indptr": np.array([0, 2, 1, 3], i64)})
    else:
        np.savez(f, allow_pickle=True, **{**csr, "data": np.array([object(), 1, 2], dtype=object)})
    rc, out, err = _run(capsys, "order", f, "-o", tmp_path / "p.txt", "-m", "rcm")
    assert rc == 2, err
    _one_line(err)
    assert not (tmp_path / "p.txt").exists()


@pytest.mark.parametrize("fmt", ["csr", "csc", "coo", "bsr", "dia"])
def test_npz_every_format_reads_like_scipy(tmp_path, fmt):
    # reference: scipy.sparse.load_npz on the same file
    A = sp.random(12, 12, density=0.3, random_state=1, format="csr") + sp.eye(12)
    B = {"csr": A.tocsr(), "csc": A.tocsc(), "coo": A.tocoo(), "bsr": A.tobsr(blocksize=(2, 2)),
         "dia": sp.dia_matrix(A.toarray())}[fmt]
    f = tmp_path / f"m_{fmt}.npz"
    sp.save_npz(f, B)
    got = read_matrix(f)
    ref = sp.csr_matrix(sp.load_npz(f))
    assert abs(got - ref).max() == 0


@pytest.mark.parametrize("what", ["comment", "blank_header", "blank_body"])
def test_gz_payload_bounded_while_streaming(tmp_path, capsys, what):
    # row 5: a small .gz holding a huge comment line or many blank lines was read whole (5 GB)
    big = {"comment": 4 << 20, "blank_header": 24 << 20, "blank_body": 4 << 20}[what]
    if what == "comment":
        data = HDR.encode() + b"%" + b"x" * big + b"\n3 3 1\n1 1 1\n"
    elif what == "blank_header":
        data = HDR.encode() + b"\n" * big + b"3 3 1\n1 1 1\n"
    else:
        data = HDR.encode() + b"3 3 1\n1 1 1\n" + b"\n" * big
    f = tmp_path / "m.mtx.gz"
    f.write_bytes(gzip.compress(data, compresslevel=1))
    del data
    t0 = time.perf_counter()
    rc, out, err = _run(capsys, "stats", f)
    assert rc == 2 and time.perf_counter() - t0 < 10
    _one_line(err)


def test_symlink_to_dev_zero_is_refused(tmp_path, capsys):
    # row 6: memory grew without bound
    link = tmp_path / "zero.mtx"
    link.symlink_to("/dev/zero")
    rc, out, err = _run(capsys, "stats", link)
    assert rc == 2 and "is a device, not a regular file" in _one_line(err)


@pytest.mark.parametrize("via_link", [False, True])
def test_fifo_input_is_refused_not_hung(tmp_path, capsys, via_link):
    # row 7: reading a FIFO hung
    fifo = tmp_path / "pipe.mtx"
    os.mkfifo(fifo)
    target = fifo
    if via_link:
        target = tmp_path / "link.mtx"
        target.symlink_to(fifo)
    signal.alarm(20)  # a hang fails the test instead of blocking the suite
    try:
        rc, out, err = _run(capsys, "stats", target)
    finally:
        signal.alarm(0)
    assert rc == 2 and "is a FIFO" in _one_line(err)


def _readonly_dir(tmp_path):
    d = tmp_path / "ro"
    d.mkdir()
    d.chmod(0o555)
    return d


@pytest.mark.skipif(ROOT, reason="running as root: a read-only folder is still writable by root, so "
                                 "this row cannot be produced without root tricks")
@pytest.mark.parametrize("cmd", ["order", "tree", "apply", "compare"])
def test_output_into_read_only_folder(tmp_path, capsys, cmd):
    # row 10: tracebacks; with --tree the permutation was written before the tree failed
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    ro = _readonly_dir(tmp_path)
    p = tmp_path / "p.txt"
    args = {"order": ("order", f, "-o", ro / "p.txt", "-m", "rcm"),
            "tree": ("order", f, "-o", p, "-m", "nd", "--tree", ro / "t.json"),
            "apply": ("apply", f, p, "-o", ro / "b.mtx"),
            "compare": ("compare", f, "--methods", "rcm", "--out", ro / "res", "--no-plots")}[cmd]
    if cmd == "apply":
        p.write_text("0\n1\n2\n")
    rc, out, err = _run(capsys, *args)
    assert rc == 2 and "permission denied" in _one_line(err)
    assert list(ro.iterdir()) == []
    if cmd == "tree":
        assert not p.exists()


def test_output_into_unwritable_system_folder(tmp_path, capsys):
    # row 10 where it can be produced as root too: /proc refuses new files even to root
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    rc, out, err = _run(capsys, "order", f, "-o", "/proc/reorder-perm.txt", "-m", "rcm")
    assert rc == 2
    _one_line(err)


def test_disk_full_one_line_no_temporary(tmp_path, capsys):
    # row 11: /dev/full is the small size-limited target available without root tricks (ENOSPC)
    if not os.path.exists("/dev/full"):
        pytest.skip("no /dev/full on this system")
    import tempfile

    before = set(os.listdir(tempfile.gettempdir()))
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    rc, out, err = _run(capsys, "order", f, "-o", "/dev/full", "-m", "rcm")
    assert rc == 2 and "disk full" in _one_line(err)
    leftover = [x for x in set(os.listdir(tempfile.gettempdir())) - before if x.startswith(".reorder-")]
    assert leftover == [] and list(tmp_path.iterdir()) == [f]
    assert Path("/dev/full").is_char_device()


def test_output_device_and_symlink_written_through_not_replaced(tmp_path, capsys):
    # row 12: -o /dev/null and symlinks were replaced by regular files
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    rc, out, err = _run(capsys, "order", f, "-o", os.devnull, "-m", "rcm")
    assert rc == 0, err
    assert Path(os.devnull).is_char_device()
    target = tmp_path / "real.txt"
    target.write_text("old\n")
    link = tmp_path / "link.txt"
    link.symlink_to(target)
    rc, out, err = _run(capsys, "order", f, "-o", link, "-m", "rcm")
    assert rc == 0, err
    assert link.is_symlink() and os.readlink(link) == str(target)
    lines = [ln for ln in target.read_text().splitlines() if not ln.startswith("#")]
    assert sorted(map(int, lines)) == [0, 1, 2]


def test_output_fifo_written_through(tmp_path, capsys):
    # issue 17 "Pipes": a FIFO output is written in place (a reader gets the data), never replaced
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    fifo = tmp_path / "out.fifo"
    os.mkfifo(fifo)
    got = []
    reader = threading.Thread(target=lambda: got.append(open(fifo, "rb").read()), daemon=True)
    reader.start()
    rc, out, err = _run(capsys, "order", f, "-o", fifo, "-m", "rcm")
    reader.join(10)
    assert rc == 0, err
    assert fifo.is_fifo()
    assert sorted(int(x) for x in got[0].decode().split("\n") if x and not x.startswith("#")) == [0, 1, 2]


def test_stdin_and_stdout_pipe():
    # issue 17 "Pipes": `-` is standard input (Matrix Market) and standard output; the summary goes
    # to stderr so the pipe carries only the permutation
    rc, out, err = _cli("order", "-", "-o", "-", "-m", "rcm", stdin=PATH3.encode())
    assert rc == 0, err
    data = [ln for ln in out.decode().splitlines() if not ln.startswith("#")]
    assert sorted(map(int, data)) == [0, 1, 2]
    assert "rcm ordering" in err


def test_stdin_other_formats_refused(capsys, monkeypatch):
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BufferedReader(io.BytesIO(b"PK\x03\x04 not text"))))
    rc, out, err = _run(capsys, "stats", "-")
    assert rc == 2 and "standard input must carry Matrix Market text" in _one_line(err)


def test_apply_to_stdout(tmp_path, capsysbinary):
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    p = tmp_path / "p.txt"
    p.write_text("2\n1\n0\n")
    rc = main(["apply", str(f), str(p), "-o", "-"])
    out, err = capsysbinary.readouterr()
    assert rc == 0, err
    assert b"wrote -" in err
    B = scipy.io.mmread(io.BytesIO(out))
    A = scipy.io.mmread(str(f)).tocsr()
    assert abs(sp.csr_matrix(B) - A[[2, 1, 0]][:, [2, 1, 0]]).max() == 0  # reference: SciPy indexing


@pytest.mark.parametrize("doc", ["deep", "null", "list"])
def test_tree_json_deep_or_null(tmp_path, capsys, doc):
    # row 13: RecursionError traceback; a null tree was silently ignored
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    t = tmp_path / "t.json"
    t.write_text({"deep": "[" * 100_000 + "]" * 100_000, "null": "null", "list": "[1, 2]"}[doc])
    rc, out, err = _run(capsys, "stats", f, "--tree", t)
    assert rc == 2 and "separator-tree JSON" in _one_line(err)


def test_parts_capped_by_n(tmp_path, capsys):
    # row 14: --parts 1000000000 on a 3x3 matrix took 8.5 GB
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    rc, out, err = _run(capsys, "order", f, "-o", tmp_path / "p.txt", "-m", "rsb", "--parts", "1000000000")
    assert rc == 2 and "--parts" in _one_line(err)
    assert not (tmp_path / "p.txt").exists()


@pytest.mark.parametrize("flag", ["--tree", "--labels"])
def test_tree_or_labels_error_leaves_no_permutation(tmp_path, capsys, flag):
    # row 15: rc 2 but the permutation file was written anyway
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    rc, out, err = _run(capsys, "order", f, "-o", tmp_path / "p.txt", "-m", "rcm", flag, tmp_path / "x")
    assert rc == 2
    _one_line(err)
    assert sorted(x.name for x in tmp_path.iterdir()) == ["m.mtx"]


def test_sigterm_while_writing_leaves_no_temporary(tmp_path):
    # row 16: 0-byte hidden temporaries were left behind
    script = (
        "import os, signal, sys\n"
        "from reorder.io import atomic_path\n"
        "from reorder.errors import Terminated\n"
        f"target = {str(tmp_path / 'out.txt')!r}\n"
        "try:\n"
        "    with atomic_path(target) as tmp:\n"
        "        open(tmp, 'w').write('partial')\n"
        "        os.kill(os.getpid(), signal.SIGTERM)\n"
        "        for _ in range(10**7): pass\n"
        "except Terminated:\n"
        "    sys.exit(143)\n"
    )
    p = subprocess.run([sys.executable, "-c", script], capture_output=True, timeout=60)
    assert p.returncode == 143, p.stderr
    assert list(tmp_path.iterdir()) == []


def test_sigint_during_startup_one_line_130(tmp_path):
    # row 17: a 23-line KeyboardInterrupt traceback
    exe = Path(sys.executable).with_name("reorder")
    if not exe.exists():
        pytest.skip("console script not installed in this environment")
    f = tmp_path / "m.mtx"
    f.write_text(PATH3)
    p = subprocess.Popen([str(exe), "stats", str(f)], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    time.sleep(0.4)  # inside the imports of numpy/scipy/numba
    p.send_signal(signal.SIGINT)
    out, err = p.communicate(timeout=60)
    if p.returncode == 0:
        pytest.skip("the command finished before the signal arrived")
    assert p.returncode == 130
    assert _one_line(err.decode()) == "reorder: error: interrupted"


def _children(pid):
    kids = []
    for d in os.listdir("/proc"):
        if d.isdigit():
            try:
                with open(f"/proc/{d}/stat") as fh:
                    fields = fh.read().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == pid:
                kids.append(int(d))
    return kids


def _alive(pid):
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False


@pytest.mark.skipif(not os.path.isdir("/proc"), reason="needs /proc to find the worker processes")
def test_kill_9_compare_takes_its_workers_along(tmp_path):
    # row 18: after kill -9 of compare --workers 2 the workers and the forkserver stayed alive
    from conftest import grid2d

    d = tmp_path / "in"
    d.mkdir()
    for k in (40, 41, 42, 43):
        scipy.io.mmwrite(str(d / f"g{k}.mtx"), grid2d(k))
    p = subprocess.Popen([sys.executable, "-m", "reorder.cli", "compare", str(d), "--workers", "2", "--no-plots",
                          "--out", str(tmp_path / "res")], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.time() + 60
    family = set()
    while time.time() < deadline:
        kids = _children(p.pid)
        family |= set(kids)
        for k in kids:
            family |= set(_children(k))
        if len(family) >= 2:
            break
        time.sleep(0.2)
    assert len(family) >= 2, "compare started no worker processes"
    time.sleep(0.5)
    for k in list(family):
        family |= set(_children(k))
    p.kill()
    p.wait()
    deadline = time.time() + 10
    while time.time() < deadline and any(_alive(k) for k in family):
        time.sleep(0.2)
    alive = [k for k in family if _alive(k)]
    for k in alive:  # do not leave them to the next test
        os.kill(k, signal.SIGKILL)
    assert alive == []


def test_banner_case_insensitive(tmp_path, capsys):
    # row 20: an upper-case banner passed our check and was then rejected by SciPy
    f = tmp_path / "m.mtx"
    f.write_text("%%MATRIXMARKET MATRIX COORDINATE REAL GENERAL\n" + PATH3.split("\n", 1)[1])
    rc, out, err = _run(capsys, "stats", f, "--json")
    assert rc == 0, err
    assert '"nnz": 5' in out


def test_raw_binary_bytes_escaped_in_message(tmp_path, capsys):
    # row 22: raw binary bytes were echoed into the one-line error message
    f = tmp_path / "m\x1b[31m.mtx"
    f.write_bytes(HDR.encode() + b"3 3 1\n1 1 \x1b[2J\xff\xfe\n")
    rc, out, err = _run(capsys, "stats", f)
    assert rc == 2
    line = _one_line(err)
    assert "\x1b" not in line and "\\x1b" in line


def test_fuzz_subset_no_crash():
    # the fast subset of scripts/fuzz_intake.py: seeded mutations of valid files in the three
    # formats, read in forked children so that a crash is seen as a crash. --self-test plants one
    # case that segfaults and one that hangs: the run passes only if exactly those two are caught,
    # so the harness itself is shown able to fail
    script = Path(__file__).resolve().parents[1] / "scripts" / "fuzz_intake.py"
    p = subprocess.run([sys.executable, str(script), "--cases", "300", "--seed", "7", "--no-json", "--self-test",
                        "--timeout", "5"], capture_output=True, text=True, timeout=180)
    assert p.returncode == 0, p.stdout[-2000:] + p.stderr[-2000:]
    assert "crashes 1, errors 0, hangs 1" in p.stdout
    assert "the planted crash and hang were caught" in p.stdout
