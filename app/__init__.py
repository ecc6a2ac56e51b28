"""ohmpick: sensor voltage-divider design.

The numerical core (units, series, models, circuit, solver, fitting, budget,
tables, trip) is pure numpy and knows nothing of HTTP; the edges (api, pages,
store, cli) wrap it.
"""

__version__ = "0.1.0"
