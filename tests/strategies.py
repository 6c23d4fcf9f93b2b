"""Hypothesis strategies shared by the differential tests (no powerspec code here)."""

from __future__ import annotations

import numpy as np
from hypothesis import strategies as st


@st.composite
def factor_matrix(draw):
    """A symmetric 2x2 .. 4x4 weighted matrix with entries from {-1, 1, 2, 0.5} (loops allowed)."""
    n = draw(st.integers(2, 4))
    a = np.zeros((n, n))
    for i in range(n):
        for j in range(i, n):
            if draw(st.booleans()):
                a[i, j] = a[j, i] = draw(st.sampled_from([-1.0, 1.0, 2.0, 0.5]))
    return a
