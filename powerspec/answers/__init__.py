"""Stage 6 -- answers: one result type, with its text and JSON forms.

* :mod:`~powerspec.answers.answer` -- :class:`Answer`, exact counts and certified values as
  text (covered digits) and JSON (read back exactly by a standard parser);
* :mod:`~powerspec.answers.notation` -- numbers as text and JSON: exact counts, certified
  values, outward-rounded bounds, atom table rows.
"""
