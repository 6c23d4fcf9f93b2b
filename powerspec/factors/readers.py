"""Reading factors from files: Matrix Market and whitespace edge lists, with caps checked first.

A factor file is untrusted input.  Before anything is allocated:

* only a **regular file** is read: folders, named pipes (FIFOs), devices such
  as ``/dev/zero``, sockets, and the kernel's pseudo-files under ``/proc``,
  ``/sys`` and ``/dev`` are refused (the file is opened non-blocking and
  checked with ``fstat``, so a FIFO cannot block the reader);
* at most :data:`MAX_FILE_BYTES` (256 MiB) are read;
* a Matrix Market header's declared size is checked against
  :data:`MAX_FILE_ORDER` vertices and :data:`MAX_FILE_ENTRIES` entries; an edge
  list may have at most :data:`MAX_FILE_ENTRIES` lines and
  :data:`MAX_FILE_ORDER` distinct vertices.

Error messages name the file (clipped), the line number and the problem --
never the line's content, which on a system file could be a secret.
"""

from __future__ import annotations

import io
import math
import os
import re
import stat
from typing import Any

import numpy as np
import scipy.sparse as sp

from powerspec.errors import FactorFileError, InputError
from powerspec.factors.factor import Factor
from powerspec.factors.matrix import clip

MAX_FILE_BYTES = 256 * 2**20
"""Largest factor file read (256 MiB)."""

MAX_FILE_ORDER = 10**6
"""Most vertices a factor file may declare (Matrix Market rows) or name (edge list)."""

MAX_FILE_ENTRIES = 2 * 10**6
"""Most stored entries a Matrix Market file may declare, and most lines of an edge list."""

_SYSTEM_ROOTS = ("/proc", "/sys", "/dev")

# ------------------------------------------------------------------------------ files


def _shown(path_str: str) -> str:
    return clip(path_str, 80, tail=True)


def _kind_of(mode: int) -> str:
    for test, name in ((stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
                       (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
                       (stat.S_ISSOCK, "a socket")):
        if test(mode):
            return name
    return "not a regular file"


def _under_system_root(path_str: str) -> str | None:
    real = os.path.realpath(path_str)
    for root in _SYSTEM_ROOTS:
        if real == root or real.startswith(root + "/"):
            return root
    return None


def _read_bytes(path_str: str) -> bytes:
    """The file's bytes, after the checks of the module docstring (FactorFileError otherwise)."""
    shown = _shown(path_str)
    root = _under_system_root(path_str)
    if root is not None:
        raise FactorFileError(
            f"cannot read factor file {shown}: files under {root} are system files, not factors")
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0)
    try:
        fd = os.open(path_str, flags | getattr(os, "O_CLOEXEC", 0))
    except FileNotFoundError:
        raise FactorFileError(f"factor file not found: {shown} (check the path)") from None
    except (OSError, ValueError) as exc:  # ValueError: an embedded NUL byte
        reason = getattr(exc, "strerror", None) or "not a valid path"
        raise FactorFileError(f"cannot read factor file {shown}: {reason}") from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            raise FactorFileError(
                f"cannot read factor file {shown}: it is {_kind_of(st.st_mode)}, not a regular "
                "file")
        if st.st_size > MAX_FILE_BYTES:
            raise FactorFileError(
                f"factor file {shown} has {st.st_size} bytes, over the cap of 256 MiB")
        chunks, total = [], 0
        while True:
            try:
                chunk = os.read(fd, min(1 << 20, MAX_FILE_BYTES + 1 - total))
            except OSError as exc:
                raise FactorFileError(f"cannot read factor file {shown}: {exc.strerror}") from None
            if not chunk:
                break
            chunks.append(chunk)
            total += len(chunk)
            if total > MAX_FILE_BYTES:
                raise FactorFileError(f"factor file {shown} is over the cap of 256 MiB")
    finally:
        os.close(fd)
    if st.st_size == 0 and total:
        # A "regular" file that reports size 0 but has content is a kernel pseudo-file.
        raise FactorFileError(f"cannot read factor file {shown}: it is a system pseudo-file")
    return b"".join(chunks)


# ----------------------------------------------------------------------- Matrix Market

_MM_FORMATS = ("coordinate", "array")
_MM_FIELDS = ("real", "double", "integer", "pattern")
_MM_SYMMETRIES = ("general", "symmetric", "skew-symmetric")
_SAFE_REASON = re.compile(r"[A-Za-z0-9 ,.()-]{1,80}")


def _mm_header(raw: bytes, shown: str) -> tuple[str, int, int, int]:
    """(format, rows, entries, line number of the size line) after checking the caps."""
    lines = io.BytesIO(raw)  # read lazily: the header and size line come first
    first = lines.readline().decode("latin-1").split()
    if len(first) != 5 or first[0].lower() != "%%matrixmarket":
        raise FactorFileError(
            f"cannot parse Matrix Market file {shown}: line 1 is not a header "
            "'%%MatrixMarket matrix coordinate|array real|integer|pattern general|symmetric'")
    obj, fmt, field, symmetry = (t.lower() for t in first[1:])
    if field == "complex" or symmetry == "hermitian":
        raise FactorFileError(
            f"Matrix Market file {shown}: complex entries are not supported (real weights only)")
    if obj != "matrix" or fmt not in _MM_FORMATS or field not in _MM_FIELDS \
            or symmetry not in _MM_SYMMETRIES:
        raise FactorFileError(
            f"cannot parse Matrix Market file {shown}: line 1 declares an unsupported kind "
            "(supported: matrix, coordinate or array, real/integer/pattern, "
            "general/symmetric/skew-symmetric)")
    for lineno, line in enumerate(lines, start=2):
        body = line.strip()
        if not body or body.startswith(b"%"):
            continue
        tokens = body.split()
        want = 3 if fmt == "coordinate" else 2
        if len(tokens) != want or not all(t.isdigit() and len(t) <= 19 for t in tokens):
            raise FactorFileError(
                f"cannot parse Matrix Market file {shown}: line {lineno} is not a size line "
                f"({'rows cols entries' if want == 3 else 'rows cols'}, whole numbers)")
        rows, cols = int(tokens[0]), int(tokens[1])
        entries = int(tokens[2]) if want == 3 else rows * cols
        if rows != cols:
            raise FactorFileError(
                f"Matrix Market file {shown}: the matrix is {rows} x {cols}, not square "
                "(a factor is an n x n matrix)")
        if rows == 0:
            raise FactorFileError(
                f"Matrix Market file {shown}: the matrix is empty (0 vertices)")
        if rows > MAX_FILE_ORDER:
            raise FactorFileError(
                f"Matrix Market file {shown} declares {rows} vertices, over the cap of "
                f"{MAX_FILE_ORDER}")
        if entries > MAX_FILE_ENTRIES:
            raise FactorFileError(
                f"Matrix Market file {shown} declares {entries} entries, over the cap of "
                f"{MAX_FILE_ENTRIES}")
        return fmt, rows, entries, lineno
    raise FactorFileError(f"cannot parse Matrix Market file {shown}: no size line after the header")


def _load_mtx(raw: bytes, path_str: str, name: str) -> Factor:
    shown = _shown(path_str)
    _mm_header(raw, shown)
    import scipy.io  # imported on first use: about 40 ms that other commands do not need

    try:
        mat = scipy.io.mmread(io.BytesIO(raw))
    except Exception as exc:  # scipy raises ValueError, OverflowError and others
        raise FactorFileError(f"cannot parse Matrix Market file {shown}: {_mm_reason(exc)}") \
            from None
    try:
        return Factor(mat, name)
    except InputError as exc:
        raise FactorFileError(f"Matrix Market file {shown}: {exc}") from None


def _mm_reason(exc: Exception) -> str:
    """scipy's reason ('Line 3: Invalid floating-point value'), kept only if it quotes no content.

    >>> _mm_reason(ValueError("Line 3: Invalid floating-point value."))
    'line 3: invalid floating-point value'
    >>> _mm_reason(ValueError("could not convert string to float: 'secret'"))
    'malformed data (ValueError)'
    """
    text = " ".join(str(exc).split())
    m = re.fullmatch(r"Line (\d+): (.*)", text)
    lineno, reason = (m.group(1), m.group(2)) if m else (None, text)
    reason = reason.rstrip(".")
    if not _SAFE_REASON.fullmatch(reason):
        reason = f"malformed data ({type(exc).__name__})"
    else:
        reason = reason[:1].lower() + reason[1:]
    return f"line {lineno}: {reason}" if lineno else reason


# ---------------------------------------------------------------------------- edge lists

_INTEGER_LABEL = re.compile(r"[+-]?[0-9]{1,18}")


def _parse_edge_list(text: str, shown: str, directed: bool, name: str) -> Factor:
    src_labels: list[str] = []
    dst_labels: list[str] = []
    weights: list[float] = []
    for lineno, line in enumerate(text.split("\n"), start=1):
        tokens = re.split(r"[#%]", line, maxsplit=1)[0].split()
        if not tokens:
            continue
        if len(tokens) not in (2, 3):
            raise FactorFileError(
                f"{shown} line {lineno}: expected 'u v' or 'u v weight' (2 or 3 fields), "
                f"found {len(tokens)} field{'s' if len(tokens) > 1 else ''}")
        weight = 1.0
        if len(tokens) == 3:
            try:
                weight = float(tokens[2])
            except ValueError:
                raise FactorFileError(
                    f"{shown} line {lineno}: the weight (third field) is not a number") from None
            if not math.isfinite(weight):
                raise FactorFileError(
                    f"{shown} line {lineno}: the weight (third field) is not finite")
        src_labels.append(tokens[0])
        dst_labels.append(tokens[1])
        weights.append(weight)
    if not weights:
        raise FactorFileError(
            f"no edges found in {shown}: give one edge per line as 'u v' or 'u v weight'")
    labels = src_labels + dst_labels
    if all(_INTEGER_LABEL.fullmatch(lab) for lab in labels):
        keys: list[Any] = [int(lab) for lab in labels]
        order = sorted(set(keys))
    else:
        keys = labels
        order = list(dict.fromkeys(src for pair in zip(src_labels, dst_labels, strict=True)
                                   for src in pair))
    if len(order) > MAX_FILE_ORDER:
        raise FactorFileError(
            f"edge list {shown} names {len(order)} vertices, over the cap of {MAX_FILE_ORDER}")
    index = {key: i for i, key in enumerate(order)}
    m = len(weights)
    src = np.fromiter((index[k] for k in keys[:m]), dtype=np.int64, count=m)
    dst = np.fromiter((index[k] for k in keys[m:]), dtype=np.int64, count=m)
    w = np.array(weights, dtype=np.float64)
    if not directed:
        off = src != dst
        src, dst, w = (np.concatenate([src, dst[off]]), np.concatenate([dst, src[off]]),
                       np.concatenate([w, w[off]]))
    n = len(order)
    return Factor(sp.coo_array((w, (src, dst)), shape=(n, n)), name)


# ---------------------------------------------------------------------------------- load


def load(path: str | os.PathLike, directed: bool = False) -> Factor:
    """Read a factor from a Matrix Market file or a whitespace edge list.

    * A name ending in ``.mtx`` (any case) is Matrix Market: the header and
      size line are checked first (real, integer or pattern entries; general,
      symmetric or skew-symmetric storage; square; at most
      :data:`MAX_FILE_ORDER` rows and :data:`MAX_FILE_ENTRIES` entries), then
      the body is read with ``scipy.io.mmread``; ``directed`` is ignored.
    * Anything else is an edge list: lines ``u v`` (weight 1) or ``u v w``;
      ``#`` and ``%`` start comments; blank lines are ignored; labels are any
      tokens.  Vertices are the distinct labels, in numeric order if all are
      integers, else in order of first appearance.  Undirected by default
      (``w`` is added to A[u,v] and A[v,u]; a loop ``u u w`` adds w once);
      ``directed=True`` adds to A[u,v] only.  Repeated lines add up.

    Only regular files of at most :data:`MAX_FILE_BYTES` bytes are read (see
    the module docstring).  Returns a Factor named ``load("<path as given>")``;
    weights are exact float64 parses of the file's numbers.  Raises
    FactorFileError (one line, with the line number but never the line's
    text) for a missing, special, oversized or unreadable file, a bad line, a
    bad or non-finite weight, an edge list with no edges, or a Matrix Market
    parse failure.

    >>> import os, tempfile
    >>> fd, name = tempfile.mkstemp(suffix=".txt")
    >>> with os.fdopen(fd, "w") as fh:
    ...     _ = fh.write("a b\\nb c 2  # weighted\\n")
    >>> g = load(name)
    >>> g.n, g.adjacency.toarray().tolist()
    (3, [[0.0, 1.0, 0.0], [1.0, 0.0, 2.0], [0.0, 2.0, 0.0]])
    >>> os.remove(name)
    """
    try:
        path_str = os.fsdecode(os.fspath(path))
    except TypeError:
        raise FactorFileError(
            f"load() needs a file path (str or os.PathLike), got {type(path).__name__}"
        ) from None
    if not path_str:
        raise FactorFileError("load() needs a file name, got an empty one")
    name = f'load("{path_str}")'
    raw = _read_bytes(path_str)
    if path_str.lower().endswith(".mtx"):
        return _load_mtx(raw, path_str, name)
    shown = _shown(path_str)
    lines = raw.count(b"\n") + (not raw.endswith(b"\n"))
    if lines > MAX_FILE_ENTRIES:
        raise FactorFileError(
            f"edge list {shown} has {lines} lines, over the cap of {MAX_FILE_ENTRIES}")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        lineno = raw.count(b"\n", 0, exc.start) + 1
        raise FactorFileError(
            f"cannot read factor file {shown}: line {lineno} is not UTF-8 text") from None
    return _parse_edge_list(text, shown, bool(directed), name)


__all__ = ["MAX_FILE_BYTES", "MAX_FILE_ENTRIES", "MAX_FILE_ORDER", "load"]
