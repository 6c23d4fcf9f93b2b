"""Factor files as untrusted input: file types, size caps, declared sizes, and errors without content."""

from __future__ import annotations

import os

import numpy as np
import pytest

from powerspec.errors import FactorFileError
from powerspec.factors import readers
from powerspec.factors.readers import MAX_FILE_ENTRIES, MAX_FILE_ORDER, load


def refused(path, *phrases):
    with pytest.raises(FactorFileError) as info:
        load(path)
    msg = str(info.value)
    assert "\n" not in msg and len(msg) < 400, msg
    for phrase in phrases:
        assert phrase in msg, msg
    return msg


@pytest.mark.timeout(10)
def test_only_regular_files_are_read(tmp_path):
    fifo = tmp_path / "pipe.mtx"
    os.mkfifo(fifo)
    refused(fifo, "named pipe (FIFO), not a regular file")  # would block forever if opened
    refused(tmp_path, "folder")
    refused("/dev/zero", "/dev")  # would read until memory runs out
    refused("/dev/null", "/dev")
    refused("/proc/self/environ", "/proc")
    refused("/sys/kernel/mm", "/sys")


@pytest.mark.timeout(10)
def test_a_link_to_a_regular_file_is_read_and_a_link_to_a_device_is_not(tmp_path):
    real = tmp_path / "g.txt"
    real.write_text("1 2\n")
    link = tmp_path / "link.txt"
    link.symlink_to(real)
    # source: the edge list written above, one edge of weight 1
    assert load(link).adjacency.toarray().tolist() == [[0.0, 1.0], [1.0, 0.0]]
    bad = tmp_path / "zero.txt"
    bad.symlink_to("/dev/zero")
    refused(bad, "/dev")


@pytest.mark.timeout(10)
def test_size_cap_is_checked_before_reading(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "MAX_FILE_BYTES", 100)
    big = tmp_path / "big.txt"
    big.write_text("1 2\n" * 50)  # 200 bytes
    refused(big, "200 bytes", "over the cap")


@pytest.mark.timeout(10)
def test_edge_list_line_and_vertex_caps(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "MAX_FILE_ENTRIES", 10)
    many = tmp_path / "many.txt"
    many.write_text("1 2\n" * 11)
    refused(many, "11 lines", "cap of 10")
    monkeypatch.setattr(readers, "MAX_FILE_ENTRIES", MAX_FILE_ENTRIES)
    monkeypatch.setattr(readers, "MAX_FILE_ORDER", 3)
    wide = tmp_path / "wide.txt"
    wide.write_text("a b\nc d\n")
    refused(wide, "4 vertices", "cap of 3")


@pytest.mark.timeout(10)
@pytest.mark.parametrize("body,phrases", [
    ("%%MatrixMarket matrix coordinate real general\n2000000 2000000 1\n1 1 1\n",
     ("2000000 vertices", f"cap of {MAX_FILE_ORDER}")),
    ("%%MatrixMarket matrix coordinate real general\n5 5 3000000\n1 1 1\n",
     ("3000000 entries", f"cap of {MAX_FILE_ENTRIES}")),
    ("%%MatrixMarket matrix array real general\n2000 2000\n1\n", ("4000000 entries",)),
    ("%%MatrixMarket matrix coordinate real general\n% comment\n\n2 x 1\n1 1 1\n",
     ("line 4", "size line")),
    ("%%MatrixMarket vector coordinate real general\n2 2 1\n1 1 1\n", ("unsupported",)),
    ("%%MatrixMarket matrix coordinate complex hermitian\n2 2 1\n1 1 1 0\n", ("complex",)),
    ("%%MatrixMarket matrix coordinate real general\n", ("no size line",)),
])
def test_matrix_market_header_is_checked_before_allocating(tmp_path, body, phrases):
    p = tmp_path / "m.mtx"
    p.write_text(body)
    refused(p, *phrases)


@pytest.mark.timeout(10)
@pytest.mark.parametrize("body,line", [
    ("%%MatrixMarket matrix coordinate real general\n2 2 2\n1 2 s3cr3t\n2 1 1\n", "line 3"),
    ("%%MatrixMarket matrix coordinate real general\n2 2 2\n1 2 1\n2 9 1\n", "line 4"),
    ("%%MatrixMarket matrix coordinate real general\n2 2 1\n1 2 1\n2 1 1\n", "line 4"),
])
def test_matrix_market_body_errors_name_the_line_only(tmp_path, body, line):
    p = tmp_path / "m.mtx"
    p.write_text(body)
    msg = refused(p, line)
    assert "s3cr3t" not in msg


@pytest.mark.timeout(10)
def test_edge_list_errors_never_quote_the_file(tmp_path):
    p = tmp_path / "env"
    p.write_text("HOME=/root\nPATH=/usr/bin:/bin\n")
    msg = refused(p, "line 1", "found 1 field")
    assert "HOME" not in msg and "/usr/bin" not in msg
    p.write_text("1 2\n2 3 token=abc\n")
    msg = refused(p, "line 2", "not a number")
    assert "token" not in msg
    p.write_bytes(b"1 2\n2 3\n\xff\xfe 4\n")
    refused(p, "line 3", "not UTF-8")


@pytest.mark.timeout(10)
def test_long_paths_are_clipped_in_messages(tmp_path):
    deep = tmp_path / ("d" * 200) / "missing.txt"
    msg = refused(deep, "not found", "missing.txt")
    assert len(msg) < 250


@pytest.mark.timeout(10)
def test_symmetric_and_pattern_matrix_market_still_read(tmp_path):
    p = tmp_path / "s.mtx"
    p.write_text("%%MatrixMarket matrix coordinate pattern symmetric\n% a triangle\n3 3 3\n"
                 "2 1\n3 1\n3 2\n")
    a = load(p).adjacency.toarray()
    # source: the triangle K_3 written by hand (pattern entries are 1, symmetric storage)
    assert np.array_equal(a, np.ones((3, 3)) - np.eye(3))
