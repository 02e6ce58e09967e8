"""``profiler survey``: field measurements against the model, statistics and calibration.

:mod:`.measurements` reads MEAS.csv and turns RSSI and SNR into a path
loss; :mod:`.calibration` holds the statistics, the location cells and the
fit; :mod:`.run` predicts every measurement with the engine of
``profiler network`` and builds the report.
"""

from .calibration import calibration_correction_db, fit_correction
from .measurements import Measurements, measured_loss_db, read_measurements_csv, received_power_dbm
from .run import SCHEMA, SurveyResult, survey

__all__ = ["calibration_correction_db", "fit_correction", "Measurements", "measured_loss_db",
           "read_measurements_csv", "received_power_dbm", "SCHEMA", "SurveyResult", "survey"]
