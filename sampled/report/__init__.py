"""Pictures and the self-contained HTML report of a loop.

* :mod:`sampled.report.style`   colours, fonts and line widths of every figure
* :mod:`sampled.report.figures` pure functions returning matplotlib figures
* :mod:`sampled.report.html`    :func:`~sampled.report.html.build_report`, one self-contained HTML file

Importing this package does not import matplotlib; the submodules do.
"""
