"""A transient series opens as one dataset with xarray's default call.

xarray's ``open_mfdataset`` concatenates every data variable along time by default
(xarray documentation, "Combining multiple files"); the cell bounds, which do not change in
time, must come out once, as they are in each file.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from bcgen.spec import parse_spec_text
from bcgen.transient import build_transient

SPEC = """\
experiment: {name: series}
transient: {start_epoch: 10ka, end_epoch: 9ka, acceleration: 20, years_per_file: 20}
grid: {kind: regular, resolution_deg: 30}
products: [monthly_insolation_fixed_day]
"""


def test_open_mfdataset_keeps_one_copy_of_the_cell_bounds(tmp_path, cf_compliant):
    build_transient(parse_spec_text(SPEC), tmp_path)
    files = sorted(tmp_path.glob("*.nc"))
    assert len(files) == 3  # 51 model years in files of 20
    with xr.open_mfdataset(files, decode_times=xr.coders.CFDatetimeCoder(use_cftime=True)) as ds:
        assert ds["lat_bnds"].dims == ("lat", "bnds")
        assert ds["lon_bnds"].dims == ("lon", "bnds")
        assert ds["insolation"].dims == ("time", "lat", "lon")
        assert ds.sizes["time"] == 51 * 12
        with xr.open_dataset(files[0]) as first:
            np.testing.assert_array_equal(ds["lat_bnds"].values, first["lat_bnds"].values)
    for path in files:
        cf_compliant(path)
