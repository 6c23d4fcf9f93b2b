"""Stage 6 -- answers: one result type, with its text and JSON forms.

* :mod:`~powerspec.answers.answer` -- :class:`Answer`, exact counts and certified values as
  text (covered digits) and JSON (read back exactly by a standard parser).
"""
