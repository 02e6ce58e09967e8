#!/usr/bin/env bash
# Ready commands for the invented Vellmoor valley scenario (synthetic terrain in dem_samples/).
# Run from the project root after installing (see README).
set -euo pipefail
mkdir -p out
GW="-29.9125,-19.955"

# 1. Gateway -> borehole pump behind the ridge: human summary, JSON, CSV and a figure.
profiler link --dem dem_samples --site-a "$GW" --site-b -29.9,-19.825 \
  --name-a "Cairnfell Beacon" --name-b "Osterby Farm pump" --mast-a 10 --mast-b 2 \
  --json out/osterby.json --csv out/osterby.csv --plot out/osterby.pdf

# 2. A clear path, at the US915 plan's frequency, with GeoJSON and KML for GIS / virtual globes.
profiler link --dem dem_samples --site-a "$GW" --site-b -29.85,-19.78 \
  --name-a "Cairnfell Beacon" --name-b "Millbrook Tank" --band US915 \
  --geojson out/millbrook.geojson --kml out/millbrook.kml

# 3. Blocked path: which data rate closes both ways with a 6 dBi gateway antenna and 2 dB of feeder?
profiler link --dem dem_samples --site-a "$GW" --site-b -30.0,-19.845 \
  --name-a "Cairnfell Beacon" --name-b "Wendle Reservoir" --gain-a-dbi 6 --cable-loss-a-db 2

# 4. The path crosses a void in the elevation data: interpolate across it.
profiler link --dem dem_samples --site-a "$GW" --site-b -29.965,-19.82 \
  --name-a "Cairnfell Beacon" --name-b "Quarry Gate sensor" --fill-voids

# 5. How high must the reservoir mast be for 0.6 F1 at k=4/3 and grazing at k=2/3?
profiler mast --dem dem_samples --site-a "$GW" --site-b -30.0,-19.845 \
  --name-a "Cairnfell Beacon" --name-b "Wendle Reservoir" --solve b --max-mast-m 60 || true

# 6. LoRa case: diffraction accepted, only a 10 dB uplink margin at SF12 is required.
profiler mast --dem dem_samples --site-a "$GW" --site-b -30.0,-19.845 \
  --name-a "Cairnfell Beacon" --name-b "Wendle Reservoir" --solve b --no-clearance \
  --min-margin-db 10 --sf 12

# 7. A surveyed profile (distance_m,elevation_m) instead of elevation data.
profiler link --profile examples/surveyed_profile.csv --name-a "Ridge Farm" --name-b "Low Meadow" \
  --mast-a 6 --mast-b 3 --plot out/surveyed.png

# 8. The frequency plans, and one in full.
profiler bands
profiler bands US915

# 9. A gateway whose EIRP would be over the EU868 limit: the warning, then --cap-eirp.
profiler link --dem dem_samples --site-a "$GW" --site-b -29.85,-19.78 \
  --name-a "Cairnfell Beacon" --name-b "Millbrook Tank" --tx-power-a-dbm 14 --gain-a-dbi 6 --cable-loss-a-db 2
profiler link --dem dem_samples --site-a "$GW" --site-b -29.85,-19.78 \
  --name-a "Cairnfell Beacon" --name-b "Millbrook Tank" --tx-power-a-dbm 14 --gain-a-dbi 6 --cable-loss-a-db 2 \
  --cap-eirp

# 10. The whole network: 2 gateways, 4 candidate sites, 40 nodes (water meters indoors, soil probes in
#     orchard trees) over the land cover; a node is heard with P >= the location percentage.
profiler network --dem dem_samples --sites examples/vellmoor_network.csv --fill-voids \
  --land-cover dem_samples/vellmoor_landcover.tif \
  --json out/network.json --csv out/network.csv --geojson out/network.geojson --kml out/network.kml \
  --plot out/network.png

# 11. Where to put the gateways: every node that can be heard twice, at the lowest cost, proven optimal.
profiler siting --dem dem_samples --sites examples/siting_sites.csv --redundancy 2 \
  --land-cover dem_samples/vellmoor_landcover.tif \
  --json out/siting.json --csv out/siting.csv --plot out/siting.png
