"""Climate stage: read NetCDF/GeoTIFF inputs lazily and normalise them.

Modules (data flow: read -> time_axis/qa -> monthly/delta):

    conventions  variable roles, temperature units, calendars, date strings
    read         open files as one lazy (time, y, x) DataArray in °C
    geotiff      multi-band GeoTIFF input (band dates)
    grid         two fields on one grid
    time_axis    day counts, daily/monthly checks, file overlap, select_years
    qa           Tmin/Tmax repair and the QA summary of ``suitmap check``
    monthly      monthly climate to daily (interpolation route)
    delta        delta-change downscaling (a model's change on observed days)

The names below are the stage's interface to the pipeline.
"""

from suitmap.climate.grid import check_same_grid
from suitmap.climate.qa import ClimateQA, qa_summary, repair_tmin_tmax
from suitmap.climate.read import COMMON_NAMES, DEFAULT_CHUNKS, open_climate, resolve_paths
from suitmap.climate.time_axis import select_years

__all__ = ["COMMON_NAMES", "DEFAULT_CHUNKS", "ClimateQA", "check_same_grid", "open_climate",
           "qa_summary", "repair_tmin_tmax", "resolve_paths", "select_years"]
