"""Field measurements of ``profiler survey``: the MEAS.csv reader and the measured path loss.

One row per uplink a node sent: ``gateway`` (a gateway of the sites file),
``lat_deg``, ``lon_deg`` (where the node was), ``rssi_dbm``, ``snr_db``
(both empty: a missed uplink, sent and not heard), and the optional
``node_mast_m`` (default 1.5 m), ``time`` (ISO 8601), ``dr`` or ``sf`` +
``bw_khz``, ``frequency_mhz``, ``tx_power_dbm``, ``node``, ``indoor``,
``clutter`` (one of the clutter classes of
:data:`profiler.terrain.landcover.CLUTTER_CLASSES`).  A malformed file is refused whole with the line number
(:class:`~profiler.errors.ProfilerError`), as the sites file is.

References
----------
.. [1] Semtech, "SX1276/77/78/79 datasheet", Rev. 4, March 2015, section
   5.5.5 "RSSI and SNR in LoRa Mode": a LoRa packet can be received below
   the noise floor; the RSSI then measures mostly noise, and the strength
   of the packet is the packet RSSI plus the packet SNR when the SNR is
   negative.
"""

from __future__ import annotations

import csv
import datetime
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ...errors import ProfilerError, refuse_empty_path
from ...limits import check_name
from ...terrain.landcover import CLUTTER_CLASSES

REQUIRED_COLUMNS = ("gateway", "lat_deg", "lon_deg", "rssi_dbm", "snr_db")
TEXT_COLUMNS = ("node", "indoor", "clutter", "time")
DEFAULT_NODE_MAST_M = 1.5
"""Node antenna height above ground when the file gives none [m] (a hand-held test node; common practice)."""

#: Numeric columns -> (low, high, unit text) of the accepted values.
NUMBER_COLUMNS = {
    "lat_deg": (-90.0, 90.0), "lon_deg": (-180.0, 180.0),
    "rssi_dbm": (-200.0, 30.0), "snr_db": (-40.0, 40.0),
    "node_mast_m": (0.0, 1000.0), "dr": (0, 15), "sf": (7, 12), "bw_khz": (1.0, 1000.0),
    "frequency_mhz": (1.0, 100_000.0), "tx_power_dbm": (-30.0, 60.0),
}
INDOOR_VALUES = ("", "no", "traditional", "thermally-efficient")
HINT = "header gateway,lat_deg,lon_deg,rssi_dbm,snr_db (see docs/survey.md, 'The measurement file')"


@dataclass(frozen=True, eq=False)
class Measurements:
    """The rows of a measurement file, one array element per uplink (file order).

    Attributes
    ----------
    gateway : tuple of str
        Gateway site name of each row.
    lat_deg, lon_deg : ndarray
        Node position [deg, WGS84].
    rssi_dbm, snr_db : ndarray
        Packet RSSI [dBm] and SNR [dB]; NaN for a missed uplink.
    node_mast_m : ndarray
        Node antenna height above ground [m].
    sf, bw_khz, dr : ndarray
        Spreading factor, bandwidth [kHz] and data rate; NaN where not given.
    frequency_mhz, tx_power_dbm : ndarray
        Per-row frequency [MHz] and node power [dBm]; NaN: the run's option.
    node, indoor, clutter, time : tuple of str
        Text columns ("" where empty).
    line : ndarray of int
        Line of each row in the file.
    source : str
        The file, for messages.
    """

    gateway: tuple
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    rssi_dbm: np.ndarray
    snr_db: np.ndarray
    node_mast_m: np.ndarray
    sf: np.ndarray
    bw_khz: np.ndarray
    dr: np.ndarray
    frequency_mhz: np.ndarray
    tx_power_dbm: np.ndarray
    node: tuple
    indoor: tuple
    clutter: tuple
    time: tuple
    line: np.ndarray
    source: str = "measurements"

    def __len__(self) -> int:
        return len(self.gateway)

    @property
    def heard(self) -> np.ndarray:
        """True where the uplink was received (RSSI and SNR given)."""
        return np.isfinite(self.rssi_dbm)


def received_power_dbm(rssi_dbm, snr_db):
    """Power of the received packet from its RSSI and SNR [dBm].

    Parameters
    ----------
    rssi_dbm : array_like
        Packet RSSI [dBm] (signal plus noise in the channel).
    snr_db : array_like
        Packet SNR [dB].

    Returns
    -------
    ndarray
        ``rssi_dbm + snr_db`` where the SNR is negative (below the noise
        floor the RSSI measures mostly noise and over-states the signal),
        else ``rssi_dbm`` [dBm].

    References
    ----------
    .. [1] Semtech SX1276/77/78/79 datasheet, Rev. 4 (2015), section 5.5.5.
    """
    rssi, snr = np.asarray(rssi_dbm, float), np.asarray(snr_db, float)
    return np.where(snr < 0.0, rssi + snr, rssi)


def measured_loss_db(received_dbm, tx_power_dbm, tx_gain_dbi, tx_cable_loss_db, rx_gain_dbi, rx_cable_loss_db):
    """Path loss between the antennas from the received power and the radio settings [dB].

    Parameters
    ----------
    received_dbm : array_like
        Received power at the receiver input [dBm].
    tx_power_dbm, tx_gain_dbi, tx_cable_loss_db : array_like
        Transmitter (node) power [dBm], antenna gain [dBi], feeder loss [dB].
    rx_gain_dbi, rx_cable_loss_db : array_like
        Receiver (gateway) antenna gain [dBi] and feeder loss [dB].

    Returns
    -------
    ndarray
        ``EIRP - received + rx gain - rx feeder loss`` with
        ``EIRP = power + tx gain - tx feeder loss`` [dB].
    """
    eirp = np.asarray(tx_power_dbm, float) + np.asarray(tx_gain_dbi, float) - np.asarray(tx_cable_loss_db, float)
    return eirp - np.asarray(received_dbm, float) + np.asarray(rx_gain_dbi, float) - np.asarray(rx_cable_loss_db,
                                                                                                  float)


def _rows(path) -> tuple[list, list]:
    """Header (lower case) and ``(line, cells)`` rows of the file; one-line refusals."""
    refuse_empty_path(path, "--measurements", "the measurement CSV file")
    p = Path(path)
    if not p.is_file():
        raise ProfilerError(f"measurement file not found: {p}; check --measurements")
    data = p.read_bytes()
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[:exc.start].count(b"\n") + 1
        raise ProfilerError(f"measurement file {p} line {line}: not UTF-8 text; save it as a UTF-8 CSV file") from None
    reader = csv.reader(text.splitlines(keepends=True))
    header, rows = None, []
    try:
        for cells in reader:
            if any(c.strip() for c in cells):
                if header is None:
                    header = [c.strip().lower() for c in cells]
                else:
                    rows.append((reader.line_num, [c.strip() for c in cells]))
    except csv.Error as exc:
        raise ProfilerError(f"measurement file {p} line {reader.line_num}: {exc}; check the quoting") from None
    if header is None:
        raise ProfilerError(f"measurement file {p} is empty; it needs a {HINT}")
    return header, rows


def _number(text, column, where):
    """One numeric cell (NaN when empty), range-checked."""
    if not text:
        return math.nan
    try:
        value = float(text)
    except ValueError:
        raise ProfilerError(f"{where}: {column} {text!r} is not a number; write a decimal number such as "
                            "-112.5") from None
    low, high = NUMBER_COLUMNS[column]
    if not math.isfinite(value):
        raise ProfilerError(f"{where}: {column} {text!r} must be a finite number; leave rssi_dbm and snr_db "
                            "empty for a missed uplink")
    if not low <= value <= high:
        raise ProfilerError(f"{where}: {column} {text} is out of range; use {low:g} to {high:g}")
    if column in ("dr", "sf") and value != int(value):
        raise ProfilerError(f"{where}: {column} {text} must be a whole number")
    return value


def _check_row(rec, where, gateways) -> None:
    """The checks between the columns of one row."""
    name = rec["gateway"]
    if not name:
        raise ProfilerError(f"{where}: gateway is empty; give the name of a gateway of the sites file")
    if name not in gateways:
        raise ProfilerError(f"{where}: gateway {name!r} is not a gateway of the sites file; use its names")
    for col in ("lat_deg", "lon_deg"):
        if not math.isfinite(rec[col]):
            raise ProfilerError(f"{where}: {col} is empty; give the node position in decimal degrees")
    if math.isfinite(rec["rssi_dbm"]) != math.isfinite(rec["snr_db"]):
        raise ProfilerError(f"{where}: give both rssi_dbm and snr_db (a received uplink) or neither (a missed "
                            "uplink)")
    if math.isfinite(rec["sf"]) != math.isfinite(rec["bw_khz"]):
        raise ProfilerError(f"{where}: give sf and bw_khz together (or dr)")
    if math.isfinite(rec["dr"]) and math.isfinite(rec["sf"]):
        raise ProfilerError(f"{where}: give either dr or sf and bw_khz, not both")
    if rec["clutter"] and rec["clutter"].lower() not in CLUTTER_CLASSES:
        raise ProfilerError(f"{where}: clutter {rec['clutter']!r} is not a clutter class; use one of "
                            f"{', '.join(CLUTTER_CLASSES)} (or leave it empty)")
    if rec["indoor"].lower() not in INDOOR_VALUES:
        raise ProfilerError(f"{where}: indoor {rec['indoor']!r} is not known; use no, traditional or "
                            "thermally-efficient (or leave it empty)")
    if rec["time"]:
        try:
            datetime.datetime.fromisoformat(rec["time"].replace("Z", "+00:00"))
        except ValueError:
            raise ProfilerError(f"{where}: time {rec['time']!r} is not ISO 8601; write e.g. "
                                "2026-03-15T10:42:00Z") from None


def read_measurements_csv(path, gateways) -> Measurements:
    """Read a measurement file.

    Parameters
    ----------
    path : str or os.PathLike
        UTF-8 CSV file with a header (any order and case); see the module
        docstring for the columns.  Other columns are ignored.
    gateways : collection of str
        The gateway names of the sites file.

    Returns
    -------
    Measurements
        The rows in file order.

    Raises
    ------
    ProfilerError
        For a missing file or column, a value that is not a number or out of
        range, an unknown gateway, RSSI without SNR (or the reverse), ``sf``
        without ``bw_khz``, a bad ``time`` or ``indoor``; the message names
        the file and the line.
    """
    header, rows = _rows(path)
    p = Path(path)
    missing = [c for c in REQUIRED_COLUMNS if c not in header]
    if missing:
        raise ProfilerError(f"measurement file {p} line 1: missing column {', '.join(missing)}; the file needs a "
                            f"{HINT}")
    if not rows:
        raise ProfilerError(f"measurement file {p} has a header but no rows; add one row per uplink")
    gateways = set(gateways)
    records = []
    for line, cells in rows:   # parsing only: one record per file row
        where = f"measurement file {p} line {line}"
        if len(cells) > len(header):
            raise ProfilerError(f"{where}: {len(cells)} fields but the header has {len(header)}; put text that "
                                "contains commas in double quotes")
        cell = {c: cells[header.index(c)] if c in header and header.index(c) < len(cells) else ""
                for c in ("gateway", *NUMBER_COLUMNS, *TEXT_COLUMNS)}
        rec = {c: _number(cell[c], c, where) for c in NUMBER_COLUMNS}
        rec.update({c: cell[c] for c in ("gateway", *TEXT_COLUMNS)}, line=line)
        _check_row(rec, where, gateways)
        if rec["node"]:
            check_name(rec["node"], f"{where}: the node name")
        records.append(rec)
    return _table(records, str(p))


def _table(records, source) -> Measurements:
    col = {c: np.array([r[c] for r in records], float) for c in NUMBER_COLUMNS}
    mast = np.where(np.isfinite(col["node_mast_m"]), col["node_mast_m"], DEFAULT_NODE_MAST_M)
    return Measurements(gateway=tuple(r["gateway"] for r in records), lat_deg=col["lat_deg"],
                        lon_deg=col["lon_deg"], rssi_dbm=col["rssi_dbm"], snr_db=col["snr_db"], node_mast_m=mast,
                        sf=col["sf"], bw_khz=col["bw_khz"], dr=col["dr"], frequency_mhz=col["frequency_mhz"],
                        tx_power_dbm=col["tx_power_dbm"], node=tuple(r["node"] for r in records),
                        indoor=tuple(r["indoor"].lower() for r in records),
                        clutter=tuple(r["clutter"].lower() for r in records),
                        time=tuple(r["time"] for r in records), line=np.array([r["line"] for r in records]),
                        source=source)


def measurements_from_records(records, gateways, source: str = "measurements") -> Measurements:
    """Build :class:`Measurements` from dicts with the columns of the file (None: empty), checked alike.

    Parameters
    ----------
    records : iterable of dict
        One mapping per uplink.
    gateways : collection of str
        The gateway names of the sites.
    source : str
        Name used in messages (``measurement N``, from 1).

    Returns
    -------
    Measurements
    """
    out = []
    gateways = set(gateways)
    for n, raw in enumerate(records, 1):
        where = f"{source}: measurement {n}"
        text = {str(k).strip().lower(): "" if v is None else str(v).strip() for k, v in dict(raw).items()}
        missing = [c for c in REQUIRED_COLUMNS if c not in text]
        if missing:
            raise ProfilerError(f"{where}: missing {', '.join(missing)}")
        rec = {c: _number(text.get(c, ""), c, where) for c in NUMBER_COLUMNS}
        rec.update({c: text.get(c, "") for c in ("gateway", *TEXT_COLUMNS)}, line=n)
        _check_row(rec, where, gateways)
        out.append(rec)
    if not out:
        raise ProfilerError(f"{source}: no measurements; give at least one")
    return _table(out, source)
