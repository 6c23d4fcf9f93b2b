"""Reading factors from files: Matrix Market and whitespace edge lists."""

from __future__ import annotations

import io
import math
import os
import re
from typing import Any

import numpy as np
import scipy.io
import scipy.sparse as sp

from powerspec.errors import FactorFileError, InputError
from powerspec.factors.factor import Factor
from powerspec.factors.matrix import _one_line

# ------------------------------------------------------------------------------ files


_INTEGER_LABEL = re.compile(r"[+-]?[0-9]+")


def _read_bytes(path_str: str) -> bytes:
    try:
        with open(path_str, "rb") as fh:
            return fh.read()
    except FileNotFoundError:
        raise FactorFileError(f"factor file not found: {path_str!r} (check the path)") from None
    except OSError as exc:
        reason = _one_line(exc.strerror or exc)
        raise FactorFileError(f"cannot read factor file {path_str!r}: {reason}") from None


def _load_mtx(raw: bytes, path_str: str, name: str) -> Factor:
    try:
        mat = scipy.io.mmread(io.BytesIO(raw))
    except Exception as exc:  # scipy raises ValueError and others for malformed files
        raise FactorFileError(
            f"cannot parse Matrix Market file {path_str!r}: {_one_line(exc)}"
        ) from None
    try:
        return Factor(mat, name)
    except InputError as exc:
        raise FactorFileError(f"Matrix Market file {path_str!r}: {exc}") from None


def _parse_edge_list(text: str, path_str: str, directed: bool, name: str) -> Factor:
    edges: list[tuple[str, str, float]] = []
    for lineno, line in enumerate(text.splitlines(), start=1):
        body = re.split(r"[#%]", line, maxsplit=1)[0]
        tokens = body.split()
        if not tokens:
            continue
        if len(tokens) not in (2, 3):
            raise FactorFileError(
                f"{path_str!r} line {lineno}: expected 'u v' or 'u v weight', "
                f"got {line.strip()!r}"
            )
        weight = 1.0
        if len(tokens) == 3:
            try:
                weight = float(tokens[2])
            except ValueError:
                raise FactorFileError(
                    f"{path_str!r} line {lineno}: weight {tokens[2]!r} is not a number "
                    f"(line {line.strip()!r})"
                ) from None
            if not math.isfinite(weight):
                raise FactorFileError(
                    f"{path_str!r} line {lineno}: weight {tokens[2]!r} is not finite "
                    f"(line {line.strip()!r})"
                )
        edges.append((tokens[0], tokens[1], weight))
    if not edges:
        raise FactorFileError(
            f"no edges found in {path_str!r}: give one edge per line as 'u v' or 'u v weight'"
        )
    labels = [lab for u, v, _ in edges for lab in (u, v)]
    if all(_INTEGER_LABEL.fullmatch(lab) for lab in labels):
        keys: list[Any] = [int(lab) for lab in labels]
        order = sorted(set(keys))
    else:
        keys = labels
        order = list(dict.fromkeys(keys))
    index = {key: i for i, key in enumerate(order)}
    src = np.fromiter((index[k] for k in keys[0::2]), dtype=np.int64, count=len(edges))
    dst = np.fromiter((index[k] for k in keys[1::2]), dtype=np.int64, count=len(edges))
    w = np.array([e[2] for e in edges], dtype=np.float64)
    if not directed:
        off = src != dst
        src, dst, w = (np.concatenate([src, dst[off]]), np.concatenate([dst, src[off]]),
                       np.concatenate([w, w[off]]))
    n = len(order)
    return Factor(sp.coo_array((w, (src, dst)), shape=(n, n)), name)


def load(path: str | os.PathLike, directed: bool = False) -> Factor:
    """Read a factor from a Matrix Market file or a whitespace edge list.

    * A name ending in ``.mtx`` (any case) is read with ``scipy.io.mmread``
      (symmetric/general storage as the file declares; ``directed`` is
      ignored).  It must be real, square, non-empty and finite.
    * Anything else is an edge list: lines ``u v`` (weight 1) or ``u v w``;
      ``#`` and ``%`` start comments; blank lines are ignored; labels are any
      tokens.  Vertices are the distinct labels, in numeric order if all are
      integers, else in order of first appearance.  Undirected by default
      (``w`` is added to A[u,v] and A[v,u]; a loop ``u u w`` adds w once);
      ``directed=True`` adds to A[u,v] only.  Repeated lines add up.

    Returns a Factor named ``load("<path as given>")``; weights are exact
    float64 parses of the file's numbers.  Raises FactorFileError (one line)
    for a missing or unreadable file, a bad line, a bad or non-finite
    weight, an edge list with no edges, or a Matrix Market parse failure.

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
    name = f'load("{path_str}")'
    raw = _read_bytes(path_str)
    if path_str.lower().endswith(".mtx"):
        return _load_mtx(raw, path_str, name)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise FactorFileError(
            f"cannot read factor file {path_str!r}: not UTF-8 text (byte {exc.start})"
        ) from None
    return _parse_edge_list(text, path_str, bool(directed), name)


__all__ = ["load"]
