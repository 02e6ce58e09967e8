"""The batch engine's geodesic sampling against geographiclib, on a synthetic global model."""

import numpy as np
import pytest
import rasterio
from affine import Affine
from geographiclib.geodesic import Geodesic

from profiler.terrain.elevation import ElevationModel
from profiler.terrain.sampling import sample_links


@pytest.fixture(scope="module")
def global_model(tmp_path_factory):
    # A coarse (0.5 deg) global grid of zeros: every point on Earth is covered.
    path = tmp_path_factory.mktemp("dem") / "global.tif"
    with rasterio.open(path, "w", driver="GTiff", width=720, height=360, count=1, dtype="float32",
                       crs="EPSG:4326", transform=Affine(0.5, 0, -180, 0, -0.5, 90)) as dst:
        dst.write(np.zeros((1, 360, 720), dtype="float32"))
    with ElevationModel.open([path]) as model:
        yield model


CASES = [  # (lat_a, lon_a, lat_b, lon_b): mid latitudes, across the antimeridian, near a pole, long
    (-29.91, -19.95, -29.90, -19.82),
    (45.2, 7.1, 45.9, 7.8),
    (-16.5, 179.8, -16.6, -179.7),
    (82.0, 10.0, 84.0, 40.0),
    (10.0, 0.0, 20.0, 15.0),
]


def test_samples_lie_on_the_geodesic(global_model):
    lat_a, lon_a, lat_b, lon_b = (np.array(c) for c in zip(*CASES))
    s = sample_links(global_model, lat_a, lon_a, lat_b, lon_b, step_m=500.0)
    assert all(e is None for e in s.error)
    for i, (la, lo, lb, lob) in enumerate(CASES):
        ref = Geodesic.WGS84.Inverse(la, lo, lb, lob)
        assert s.length_m[i] == pytest.approx(ref["s12"], abs=1e-3)          # 1 mm
        line = Geodesic.WGS84.InverseLine(la, lo, lb, lob)
        m = int(s.n[i])
        for j in np.linspace(0, m - 1, 40).astype(int):
            pos = line.Position(s.distance_m[i, j])
            # 1e-7 deg is about 1 cm: the engine interpolates between exact anchors 250 m apart.
            assert s.lat_deg[i, j] == pytest.approx(pos["lat2"], abs=1e-7)
            assert (s.lon_deg[i, j] - pos["lon2"] + 180) % 360 - 180 == pytest.approx(0.0, abs=1e-7)
        assert np.all(np.abs(s.lon_deg[i, :m]) <= 180)


def test_bad_links_carry_errors_and_others_go_on(global_model, tmp_path):
    path = tmp_path / "patch.tif"
    with rasterio.open(path, "w", driver="GTiff", width=10, height=10, count=1, dtype="float32", crs="EPSG:4326",
                       transform=Affine(0.1, 0, 0, 0, -0.1, 1), nodata=-9999) as dst:
        data = np.zeros((1, 10, 10), dtype="float32")
        data[0, 5, 5] = -9999
        dst.write(data)
    with ElevationModel.open([path]) as model:
        s = sample_links(model, np.array([0.8, 0.2, 0.5, 0.3]), np.array([0.2, 0.2, 0.1, 0.3]),
                         np.array([0.8, 5.0, 0.5, 0.3]), np.array([0.8, 5.0, 0.9, 0.3]), step_m=1000.0)
    assert s.error[0] is None
    assert "outside the elevation data" in s.error[1]
    assert "void" in s.error[2]
    assert "same point" in s.error[3]
    assert np.isnan(s.terrain_m[1]).all()
