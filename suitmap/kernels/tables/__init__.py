"""Fast daily kernels: tables and float32 loops built once per profile from the exact kernels.

    core         DailyTable and the compiled passes (lookup, exact fallback)
    build        build_table, degree_day_table, development_table
    degree_days  the degree-day DailyTables: closed form, float32, table
    daylength    the Parton-Logan day's strategies: arc tables or per-day quadrature
    grid         graded node axes (kinks on nodes) and lattice locators
    _pl_arcs     the Parton-Logan arc tables
    _lanes, _lanes_pl   the lookups sixteen values at a time (LLVM gathers)
"""

from suitmap.kernels.tables.build import build_table, degree_day_table, development_table
from suitmap.kernels.tables.core import T_RANGE, DailyTable

__all__ = ["DailyTable", "T_RANGE", "build_table", "degree_day_table", "development_table"]
