"""Benchmark: ETOPO5 (2161 x 4320) to a 1-degree grid, anomaly, mask, cleanup and report.

Two measurements, each in a fresh Python process so that its peak resident memory is
its own:

1. The whole chain (``bcgen.geography``), median of three processes: read ETOPO5,
   add a reconstruction anomaly (an invented 1-degree dome), lower the sea level by
   120 m, regrid conservatively,
   flood-fill and clean the mask (with a Gibraltar strait rule), make the fractions,
   the change report and its text (imports done before the clock starts). Targets: under
   5 s and under 1 GiB.
2. The regridding step alone, side by side with a bare numpy block mean of the same
   array (2160 x 4320 rows reshaped into 12 x 12 blocks: reading each source cell once
   is the limit), alternating round after round; printed: the median times and their
   ratio (target at most 3). When xarray-regrid is installed, its conservative method
   on the same array is timed too, for the record.

Needs ``/usr/share/ferret-vis/data/etopo5.cdf`` (Debian package ferret-datasets).
Run: ``python tests/benchmarks/bench_geography.py [--rounds 5]``.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from pathlib import Path

from measure import peak_rss_mib, run_child, verdict

ETOPO5 = "/usr/share/ferret-vis/data/etopo5.cdf"
TARGET_S = 5.0
TARGET_MIB = 1024.0
TARGET_RATIO = 3.0


def chain() -> dict:
    import cf_units  # noqa: F401  (imports are not part of the timing)
    import numpy as np
    import scipy.ndimage  # noqa: F401
    import xarray  # noqa: F401

    from bcgen.geography import (
        GeographyInputs,
        LatLonField,
        MaskSettings,
        StraitRule,
        change_report,
        make_geography,
        read_field,
        report_text,
    )
    from bcgen.grids import regular_grid

    start = time.perf_counter()
    present = read_field(ETOPO5, "ROSE")
    g1 = regular_grid(1.0)
    lat = g1.lat_deg[:, None]
    lon = g1.lon_deg[None, :]
    r2 = ((lat - 60.0) / 15.0) ** 2 + ((lon - 260.0) / 30.0) ** 2
    dome = np.where(r2 < 1, 3000.0 * np.sqrt(np.clip(1 - r2, 0, 1)), 0.0)
    epoch = LatLonField(g1, dome, "m", "dome")
    zero = LatLonField(g1, np.zeros(g1.shape), "m", "zero")
    inputs = GeographyInputs(present, epoch, zero, ice_thickness=epoch, sea_level_change_m=-120.0)
    rule = StraitRule("Gibraltar", "open", path_deg=((36.0, -8.0), (36.0, -3.0)), depth_m=280.0)
    geo = make_geography(inputs, g1, MaskSettings(straits=(rule,)))
    text = report_text(change_report(geo, mean_salinity=34.7, salinity_source="given"))
    return {"seconds": time.perf_counter() - start, "peak_mib": peak_rss_mib(),
            "report_lines": text.count("\n")}


def regrid(rounds: int) -> dict:

    from bcgen.geography import ConservativeRegridder, read_field
    from bcgen.grids import regular_grid

    field = read_field(ETOPO5, "ROSE")
    z = field.values
    g1 = regular_grid(1.0)
    r = ConservativeRegridder.from_grids(field.grid, g1)
    r.mean(z)
    z[:2160].reshape(180, 12, 360, 12).mean(axis=(1, 3))  # warm-up both
    ours, block = [], []
    for _ in range(rounds):
        t = time.perf_counter()
        r.mean(z)
        ours.append(time.perf_counter() - t)
        t = time.perf_counter()
        z[:2160].reshape(180, 12, 360, 12).mean(axis=(1, 3))
        block.append(time.perf_counter() - t)
    out = {"ours_s": statistics.median(ours), "block_s": statistics.median(block)}
    try:
        import xarray as xr
        import xarray_regrid  # noqa: F401

        da = xr.DataArray(z, dims=("lat", "lon"),
                          coords={"lat": field.grid.lat_deg, "lon": field.grid.lon_deg})
        target = xr.Dataset(coords={"lat": g1.lat_deg, "lon": g1.lon_deg})
        da.regrid.conservative(target, latitude_coord="lat")
        times = []
        for _ in range(max(1, rounds // 2)):
            t = time.perf_counter()
            da.regrid.conservative(target, latitude_coord="lat")
            times.append(time.perf_counter() - t)
        out["xarray_regrid_s"] = statistics.median(times)
    except ImportError:
        pass
    return out


def main(argv=None) -> int:
    p = argparse.ArgumentParser()
    p.add_argument("--rounds", type=int, default=7)
    p.add_argument("--child", choices=["chain", "regrid"])
    args = p.parse_args(argv)
    if args.child:
        print(json.dumps(chain() if args.child == "chain" else regrid(args.rounds)))
        return 0
    if not Path(ETOPO5).is_file():
        print(f"{ETOPO5} not found: apt-get install ferret-datasets")
        return 1
    runs = [run_child(__file__, "--child", "chain", "--rounds", args.rounds) for _ in range(3)]
    c = {"seconds": statistics.median(r["seconds"] for r in runs),
         "peak_mib": max(r["peak_mib"] for r in runs)}
    r = run_child(__file__, "--child", "regrid", "--rounds", args.rounds)
    ratio = r["ours_s"] / r["block_s"]
    ok_chain = c["seconds"] < TARGET_S and c["peak_mib"] < TARGET_MIB
    print(f"whole chain (read, anomaly, regrid, mask, cleanup, fractions, report), median of "
          f"3 fresh processes: {c['seconds']:.2f} s, peak {c['peak_mib']:.0f} MiB "
          f"(targets {TARGET_S:g} s, {TARGET_MIB:.0f} MiB: {verdict(ok_chain)})")
    print(f"regridding ETOPO5 to 1 deg: {r['ours_s'] * 1e3:.1f} ms vs numpy block mean "
          f"{r['block_s'] * 1e3:.1f} ms: ratio {ratio:.2f} (target {TARGET_RATIO:g}: "
          f"{verdict(ratio <= TARGET_RATIO)})")
    if "xarray_regrid_s" in r:
        print(f"for the record, xarray-regrid conservative: {r['xarray_regrid_s'] * 1e3:.0f} ms "
              f"(ratio {r['xarray_regrid_s'] / r['block_s']:.0f} to the block mean)")
    return 0 if ok_chain and ratio <= TARGET_RATIO else 1


if __name__ == "__main__":
    sys.exit(main())
