"""Symbolic reports in the stable JSON layout of the other answers.

:func:`~powerspec.interfaces.symbolic_printing.symbolic_report` gives every
closed form under ``symbolic`` (name -> sympy-readable string).  The command
line's JSON contract wants the same keys with or without ``--symbolic``, so
:func:`contract` adds them (``symbolic`` stays, complete):

* ``spectrum`` -- ``atoms``: ``[[eigenvalue, multiplicity]]``, one parametric
  atom in the composition indices (``constraint`` and ``notes`` say which);
* ``top`` -- ``atoms``: ``[[largest, multiplicity]]`` (``--bottom``: the
  smallest), when a closed form of that extreme exists;
* ``invariants`` -- ``invariants``: name -> ``{value, lower, upper, method}``,
  lower = upper = value (closed forms are exact);
* ``moments`` -- ``moments`` is already a list of ``[p, value]``.

>>> r = contract({"query": "top", "method": "m", "symbolic": {"largest": "k",
...               "largest_multiplicity": "1", "spectral_radius": "k"}}, bottom=False)
>>> r["atoms"]
[['k', '1']]
"""

from __future__ import annotations

EXTREMES = ("largest", "smallest")


def _invariants(forms: dict, method: str) -> dict:
    out = {}
    for name, value in forms.items():
        if name.endswith("_multiplicity") or name in EXTREMES:
            continue
        out[name] = {"value": value, "lower": value, "upper": value, "method": method}
    return out


def contract(report: dict, *, bottom: bool = False) -> dict:
    """The report with the contract's keys added (see the module docstring); a new dict."""
    out = dict(report)
    forms = report.get("symbolic", {})
    query = report.get("query")
    if query == "spectrum" and "eigenvalue" in forms:
        out["atoms"] = [[forms["eigenvalue"], forms.get("multiplicity", "1")]]
    elif query == "top":
        side = EXTREMES[1] if bottom else EXTREMES[0]
        if side in forms:
            out["atoms"] = [[forms[side], forms.get(f"{side}_multiplicity", "1")]]
        else:
            out.setdefault("notes", [])
            out["notes"] = [*out["notes"], f"no closed form of the {side} eigenvalue; see "
                            "'symbolic' for the spectral radius"]
    elif query == "invariants":
        out["invariants"] = _invariants(forms, report.get("method", ""))
    return out


__all__ = ["contract"]
