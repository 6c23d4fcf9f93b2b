"""Stage 7 -- interfaces: command line, demo, plots, printers; translation only, no mathematics.

* :mod:`~powerspec.interfaces.cli` -- the ``powerspec`` command: dispatch, exit statuses, errors;
* :mod:`~powerspec.interfaces.cli_args` -- its argument parser, help texts and option checks;
* :mod:`~powerspec.interfaces.report` -- the text layout of answers (summaries, zero line, wording);
* :mod:`~powerspec.interfaces.sweep` -- one number tabulated against k or a named parameter;
* ``plots``, ``plot_source``, ``plot_views``, ``plot_sweep`` -- figures (matplotlib, the ``plot``
  extra): the numbers gathered from the queries, then drawn;
* :mod:`~powerspec.interfaces.estimate` -- ``--method estimate``, the labelled sorted-degree estimate;
* :mod:`~powerspec.interfaces.progress` -- progress bars on stderr (tqdm), silent when not a terminal;
* ``symbolic_printing``, ``symbolic_contract`` -- sympy closed forms as text, LaTeX and JSON;
* :mod:`~powerspec.interfaces.files` -- atomic writes onto regular files only;
* :mod:`~powerspec.interfaces.demo` -- the built-in worked scenario.
"""
