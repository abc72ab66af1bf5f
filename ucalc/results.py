"""What every result object offers besides its fields: a table, an ``uncertainties`` number and a notebook view.

The engines' result classes inherit these methods; each hands off at once (pandas, ``uncertainties`` and the
HTML fragment of :mod:`ucalc.reports.notebook` are imported only when called), so the engines stay free of
tables, numbers libraries and HTML.
"""

from __future__ import annotations

from typing import Any


class ResultMethods:
    """Methods shared by :class:`~ucalc.engines.gum.GumResult` and :class:`~ucalc.engines.montecarlo.MonteCarloResult`.

    A subclass has the fields ``measurand``, ``value`` and ``standard_uncertainty``.
    """

    def as_ufloat(self) -> Any:
        """The result as an ``uncertainties`` number: the estimate y with u_c(y) as its standard deviation.

        The number is independent of any other ``uncertainties`` number (its correlation with the inputs is not
        carried over), so it suits further calculations with quantities measured separately.
        """
        from uncertainties import ufloat

        fields: Any = self
        if fields.standard_uncertainty is None:
            raise ValueError("the standard uncertainty is not defined (an input's variance does not exist, JCGM 101 "
                             "6.4.9), so the result has no uncertainties number")
        return ufloat(float(fields.value), float(fields.standard_uncertainty), tag=str(fields.measurand))

    def to_frame(self) -> Any:
        """The result as a pandas DataFrame (the budget table for the GUM, a one-row summary for Monte Carlo)."""
        from .reports.notebook import frame

        return frame(self)

    def _repr_html_(self) -> str:
        """HTML table shown by Jupyter and other notebook front ends."""
        from .reports.notebook import html

        return html(self)
