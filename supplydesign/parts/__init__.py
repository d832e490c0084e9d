"""The parts world: IEC 60063 E-series, parts catalogs, and a demo price model.

- :mod:`.eseries`: ``series``, ``values``, ``nearest``, ``next_up``, ``next_down``
- :mod:`.catalog`: ``load_catalog`` -> :class:`Catalog` (``get``, ``row``,
  ``table``, ``select``), validated CSV files
- :mod:`.schema`: the columns of each catalog family
- :mod:`.pricing`: E-series capacitors and resistors priced by an invented
  demo model, to compete with catalog parts
- :mod:`.describe`: catalog contents as text tables
- :mod:`.rating`: the cheapest adequate part for given stresses, vectorised
  (``choose_capacitors``, ``choose_chokes``, ``choose_resistors``, ``candidate_pool``)
- :mod:`.query`: parts with a given value, checks of user catalogs
"""

from .catalog import Catalog, load_catalog
from .describe import Listing, describe_catalog
from .eseries import nearest, next_down, next_up, series, values
from .pricing import (
    DEMO_PRICES,
    DemoPriceModel,
    eseries_capacitors,
    eseries_resistors,
    merge_tables,
)

__all__ = [
    "DEMO_PRICES",
    "Catalog",
    "DemoPriceModel",
    "Listing",
    "describe_catalog",
    "eseries_capacitors",
    "eseries_resistors",
    "load_catalog",
    "merge_tables",
    "nearest",
    "next_down",
    "next_up",
    "series",
    "values",
]
