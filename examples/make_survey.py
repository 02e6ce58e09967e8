"""Write the invented field survey of the Vellmoor sample network: ``examples/vellmoor_survey.csv``.

A test node was carried to 45 places around the Cairnfell Beacon gateway
of ``examples/sites.csv`` (three uplinks at each, SF12 at 125 kHz, 14 dBm,
a 1.5 m antenna).  Nothing here was measured: each uplink's path loss is
the model's own prediction (``profiler network``'s engine, P.1812-8 at the
EU868 mean channel frequency, the default settings) plus

- a stated bias, :data:`OFFSET_DB` = +4 dB (the "field" loses 4 dB more
  than the model predicts),
- a place-to-place term, Gaussian with :data:`PLACE_SIGMA_DB` = 3 dB, the
  same for the three uplinks of a place,
- an uplink-to-uplink term, Gaussian with :data:`UPLINK_SIGMA_DB` = 1.5 dB,

all drawn from a seeded generator (:data:`SEED`), so the file is the same on
every run.  The received power becomes an RSSI and an SNR over the noise
floor of a 3 dB noise-figure gateway (below the floor the RSSI shows the
noise and the SNR is negative: RSSI + SNR is the received power, Semtech
SX1276 datasheet section 5.5.5); an uplink below the SF12 sensitivity is
written as missed (both cells empty).  ``profiler survey`` on this file
should give back an offset near +4 dB; the script runs it and draws the
sheet.  Run from the repository root::

    python examples/make_survey.py   # writes examples/vellmoor_survey.csv and examples/vellmoor_survey.png
"""

from __future__ import annotations

import csv
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
if str(ROOT) not in sys.path:           # run from a source checkout without installing
    sys.path.insert(0, str(ROOT))

from profiler.engine.links import NetworkSettings  # noqa: E402
from profiler.engine.radio import RadioSettings  # noqa: E402
from profiler.lora.bands import resolve_frequency_mhz  # noqa: E402
from profiler.lora.modem import lora_sensitivity_batch_dbm  # noqa: E402
from profiler.products.network import compute_links  # noqa: E402
from profiler.products.sites import read_sites_csv  # noqa: E402
from profiler.terrain.elevation import ElevationModel  # noqa: E402

OFFSET_DB = 4.0
PLACE_SIGMA_DB = 3.0
UPLINK_SIGMA_DB = 1.5
SEED = 20261203
PLACES = 45
UPLINKS_PER_PLACE = 3
NODE_MAST_M = 1.5
TX_POWER_DBM = 14.0
GAIN_DBI = 2.15
NOISE_FIGURE_DB = 3.0
SF, BW_KHZ = 12, 125.0
GATEWAY = "Cairnfell Beacon"
CLUTTER = ("open", "trees", "suburban")


def places(rng, lat0, lon0):
    """Node places 1-12 km from the gateway inside the sample terrain (-30.05..-29.8, -20..-19.75)."""
    lat = rng.uniform(-30.03, -29.82, PLACES * 3)
    lon = rng.uniform(-19.99, -19.76, PLACES * 3)
    d_km = np.hypot((lat - lat0) * 111.2, (lon - lon0) * 96.4)
    keep = np.flatnonzero((d_km > 1.0) & (d_km < 12.0))[:PLACES]
    return lat[keep], lon[keep]


def main(out=HERE / "vellmoor_survey.csv", figure=HERE / "vellmoor_survey.png"):
    rng = np.random.default_rng(SEED)
    sites = read_sites_csv(HERE / "sites.csv")
    g = sites.index_of(GATEWAY)
    lat, lon = places(rng, sites.lat_deg[g], sites.lon_deg[g])
    f_mhz, band = resolve_frequency_mhz(None, None)
    radio = RadioSettings(tx_power_dbm=TX_POWER_DBM).validate().with_model(True)
    settings = NetworkSettings(dem_paths=(str(ROOT / "dem_samples"),), frequency_mhz=f_mhz, band=band,
                               k_factor=4.0 / 3.0, clearance_ratio=0.6, step_m=None, fill_voids=False, radio=radio)
    n = lat.size
    with ElevationModel.open([str(ROOT / "dem_samples")]) as model:
        res = compute_links(model, settings, np.full(n, sites.lat_deg[g]), np.full(n, sites.lon_deg[g]),
                            np.full(n, sites.mast_m[g]), lat, lon, np.full(n, NODE_MAST_M))
    ok = np.array([e is None for e in res["error"]])
    lat, lon, predicted = lat[ok], lon[ok], res["total_loss_db"][ok]
    place_term = rng.normal(0.0, PLACE_SIGMA_DB, lat.size)
    clutter = rng.choice(CLUTTER, lat.size)
    loss = (predicted + OFFSET_DB + place_term)[:, None] + rng.normal(0.0, UPLINK_SIGMA_DB,
                                                                      (lat.size, UPLINKS_PER_PLACE))
    received = TX_POWER_DBM + GAIN_DBI - loss + GAIN_DBI
    noise_dbm = -174.0 + 10.0 * np.log10(BW_KHZ * 1e3) + NOISE_FIGURE_DB
    snr = np.round((received - noise_dbm) * 4.0) / 4.0          # the SNR register's quarter-dB steps
    rssi = np.round(np.where(snr < 0.0, received - snr, received))
    heard = received >= lora_sensitivity_batch_dbm(SF, BW_KHZ, NOISE_FIGURE_DB)
    with open(out, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["gateway", "node", "lat_deg", "lon_deg", "rssi_dbm", "snr_db", "sf", "bw_khz", "tx_power_dbm",
                    "node_mast_m", "clutter", "time"])
        for i in range(lat.size):       # writing rows of a small sample file
            for j in range(UPLINKS_PER_PLACE):
                cells = (f"{rssi[i, j]:.0f}", f"{snr[i, j]:.2f}") if heard[i, j] else ("", "")
                time = f"2026-11-{10 + i // 15:02d}T{9 + j:02d}:{(i * 7) % 60:02d}:00Z"
                w.writerow([GATEWAY, "test node", f"{lat[i]:.6f}", f"{lon[i]:.6f}", *cells, SF, f"{BW_KHZ:g}",
                            f"{TX_POWER_DBM:g}", NODE_MAST_M, clutter[i], time])
    print(f"{out}: {lat.size} places, {int(heard.sum())} uplinks heard, {int((~heard).sum())} missed; "
          f"mean bias drawn {OFFSET_DB + place_term.mean():.2f} dB")
    draw(out, figure)


def draw(measurements, figure):
    """Run ``profiler survey`` on the sample and draw its sheet (the README picture)."""
    from profiler import survey
    from profiler.plot.survey import write_survey_figure

    dem = [str(ROOT / "dem_samples")]
    report = survey(HERE / "sites.csv", measurements, dem=dem, progress=False).to_dict()
    write_survey_figure(report, figure, paper="a4", dpi=150, dem_paths=dem,
                        sheet={"project": "Vellmoor valley test drive", "date": "2026-12-03"})
    c = report["calibration"]
    print(f"{figure}: fitted offset {c['offset_db']:+.2f} +/- {c['offset_se_db']:.2f} dB "
          f"(put in {OFFSET_DB:+.1f} dB), RMSE {c['rmse_before_db']:.2f} -> {c['rmse_after_db']:.2f} dB")


if __name__ == "__main__":
    main()
