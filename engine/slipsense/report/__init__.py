"""Self-contained HTML reports of analysis results (figures embedded as base64 PNG).

:func:`build_report` reads a results GeoPackage and a run record and returns the HTML text and
the PNG bytes of its figures.  Matplotlib is used only through :mod:`slipsense.figures`.
"""
from .build import CAUTIONS, build_report, figures_for, read_results

__all__ = ["build_report", "figures_for", "read_results", "CAUTIONS"]
