"""Many spectra, one analysis: run a recipe over a series, locally or on a Dask cluster.

>>> import widgetkit as wk
>>> s = wk.Session.from_file("hc20_300K.jdx")            # doctest: +SKIP
>>> ...  # work out the analysis on one spectrum                   # doctest: +SKIP
>>> res = wk.run_series(s.recipe(), "ramp/", variable="set temperature",
...                     out="ramp-results")              # doctest: +SKIP
>>> res.table                                            # tidy constants  # doctest: +SKIP
>>> res.plot("T_rot"); res.sessions[3]; res.verify()     # doctest: +SKIP

The pieces: :class:`~widgetkit.session.recipe.Recipe` (the steps, ``s.recipe()``),
:func:`run_series` (the run: process pool or Dask, progress, warm starts,
re-runs that skip finished spectra), :class:`SeriesResult` (tables, sessions,
plot, save, verify), :class:`Variable` (how the series variable is read).
Nothing here imports Dask until a client is given.
"""

from ..session.recipe import Recipe, RecipeRun, RecipeStep
from .result import SeriesResult, SeriesSessions, SeriesVerifyReport, is_series_file
from .runner import run_series
from .sources import Source, expand_sources
from .variable import Variable

__all__ = ["Recipe", "RecipeStep", "RecipeRun", "run_series", "SeriesResult", "SeriesSessions",
           "SeriesVerifyReport", "Variable", "Source", "expand_sources", "is_series_file"]
