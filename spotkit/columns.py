"""The glossary: every column name spotkit uses, with its unit and dtype.

This module is the only place where column names are spelled out. Readers map a
file's own headings onto these names at the boundary (:mod:`spotkit.io.ingest`);
everything else imports the constants from here.

Units are the house units: time in UTC, frequency in Hz, SNR in dB in a
2500 Hz reference bandwidth, power in dBm, distance in km, angles in degrees
(bearings clockwise from true north, 0-360).
"""
from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

# --- canonical spot table -------------------------------------------------------------
TIME = "time_utc"
SLOT = "slot_utc"
TX_CALL = "tx_call"
TX_LOCATOR = "tx_locator"
RX_CALL = "rx_call"
RX_LOCATOR = "rx_locator"
FREQ = "freq_hz"
BAND = "band"
SNR = "snr_db"
POWER = "power_dbm"
DRIFT = "drift_hz"
TX_LAT = "tx_lat"
TX_LON = "tx_lon"
RX_LAT = "rx_lat"
RX_LON = "rx_lon"
DISTANCE = "distance_km"
BEARING = "bearing_deg"
REVERSE_BEARING = "reverse_bearing_deg"
SOURCE_FILE = "source_file"
SOURCE_ROW = "source_row"

# --- optional path columns (spotkit.geo.geodesic / spotkit.geo.sun helpers) -------------
MID_LAT = "mid_lat"
MID_LON = "mid_lon"
HOPS = "hops"
ELEVATION = "elevation_deg"
TX_SUN = "tx_sun_elevation_deg"
RX_SUN = "rx_sun_elevation_deg"
MID_SUN = "mid_sun_elevation_deg"
PATH_LIGHT = "path_light"  # "day" | "night" | "greyline" | "mixed" (spotkit.geo.sun.path_light)

# --- derived analysis columns -----------------------------------------------------------
SNR_PER_W = "snr_per_w_db"  # SNR normalised to 1 W (30 dBm) transmit power

# --- A/B pairs (spotkit.compare.pairing) ------------------------------------------------
ANTENNA = "antenna"  # "A" | "B": which antenna a spot belongs to
CLUSTER = "cluster"  # bootstrap unit: receiver (transmit designs) or transmitter (receive design)
SNR_A = "snr_a_db"  # A's SNR normalised to 1 W [dB]; NaN when A was not heard
SNR_B = "snr_b_db"  # B's SNR normalised to 1 W [dB]; NaN when B was not heard
LIMIT_A = "limit_a_db"  # A's censoring limit on the same scale: threshold - (power - 30) [dB]
LIMIT_B = "limit_b_db"
HEARD_A = "heard_a"
HEARD_B = "heard_b"
#: compressed pair table ("pair histogram"): one row per group x cluster x kind x value
KIND = "kind"  # "both" | "only_a" | "only_b"
VALUE = "value_db"  # both: B-A; only_a: upper bound of B-A; only_b: lower bound of B-A [dB]
COUNT = "count"
KINDS = ("both", "only_a", "only_b")
#: before/after design: KIND of a target-minus-control SNR observed before / after the change
PERIOD_KINDS = ("before", "after")
#: before/after design: KIND of an observation before / after the change where the target
#: was on the air but not heard (VALUE: upper bound of its target-minus-control SNR [dB])
PERIOD_BOUND_KINDS = ("before_below", "after_below")
#: compressed pair table: pairs in which A (B) was heard exactly at its receiver's decode
#: threshold (VALUE 0); used for the threshold-density correction of spotkit.compare.estimate
EDGE_KINDS = ("edge_a", "edge_b")
FAR_CALL = "far_call"  # the station at the other end of a pair: receiver (transmit designs)
FAR_LOCATOR = "far_locator"  # or transmitter (receive design)
FAR_LAT = "far_lat"
FAR_LON = "far_lon"
SLOT_B = "slot_b_utc"  # alternating design: slot of B's transmission paired with A's (SLOT)
#: switching schedule (alternating design): one row per interval [start, end) with ANTENNA
#: "A" | "B" and optionally BAND
SCHEDULE_START = "start"
SCHEDULE_END = "end"

# --- comparison results (spotkit.compare.estimate) --------------------------------------
B_MINUS_A = "b_minus_a_db"
CI_LOW = "ci_low_db"
CI_HIGH = "ci_high_db"
PAIRS = "pairs"
BOTH = "both"
ONLY_A = "only_a"
ONLY_B = "only_b"
P_VALUE = "p_value"
P_ADJUSTED = "p_adjusted"
METHOD = "method"
DISTANCE_MIN = "distance_min_km"
DISTANCE_MAX = "distance_max_km"
BEARING_MIN = "bearing_min_deg"
BEARING_MAX = "bearing_max_deg"
ELEVATION_MIN = "elevation_min_deg"
ELEVATION_MAX = "elevation_max_deg"
HOUR = "hour"  # hour of day, 0-23 (UTC or path-midpoint local solar time)
FIELD = "field_locator"  # 2-character locator field of the far station
SQUARE = "square_locator"  # 4-character locator square of the far station
BOTH_HEARD = "both_heard_b_minus_a_db"  # mean B-A of the pairs where both were heard [dB]
HODGES_LEHMANN = "hodges_lehmann_db"  # HL shift of the both-heard differences [dB]
P_WILCOXON = "p_wilcoxon"  # signed-rank p over clusters' median both-heard differences
P_SIGN = "p_sign"  # sign-test p over clusters' median both-heard differences
P_MCNEMAR = "p_mcnemar"  # McNemar-type sign-test p over clusters of only_b - only_a
SIGMA = "sigma_db"  # fitted spread of B-A per pair [dB]
CORRECTION = "threshold_correction_db"  # added to the censored MLE (spotkit.compare.estimate) [dB]
#: added to the pooled fit's B minus A for B-A varying between receivers (default detection
#: model: the receiver-effects fit's mean over the pairs less the pooled fit's; NaN where
#: not applied: one cluster, edge correction, or missed reports fitted) [dB]
RECEIVER_SHIFT = "receiver_shift_db"
CI_STAT_LOW = "ci_stat_low_db"  # statistical part of the interval alone (cluster bootstrap) [dB]
CI_STAT_HIGH = "ci_stat_high_db"
#: systematic part [dB]: largest change of B minus A over the plausible detection models
#: (curve width, rounding before/after the threshold, 50 % point); CI_LOW / CI_HIGH are the
#: statistical interval widened by it on both sides
SYSTEMATIC = "systematic_db"
TAIL_DF = "tail_df"  # degrees of freedom of the Student t model chosen by the data (inf: normal)
DETECTION_TAU = "detection_tau_db"  # width of the decoders' detection curve used [dB]
CLUSTERS = "clusters"  # number of bootstrap clusters (receivers / transmitters) in the group
NOTE = "note"  # plain-language remark (too few pairs, no interval...)
GROUP = "group"  # readable group label
# --- the "where" grid (spotkit.compare.grid) ------------------------------------------
GRID_KEY = "grid_key"  # what the grid's columns are: distance, bearing or hour
CELL = "cell"  # short label of a grid column, e.g. "1,000-3,000 km", "45-90 deg", "06 h"
CELL_ORDER = "cell_order"  # position of the cell along its key (0, 1, ...)
SIGNIFICANT = "significant"  # the verdict names a better antenna (CI excludes 0, enough data)

# --- several antennas and series of changes (spotkit.compare.multi, spotkit.compare.series) --
FIRST = "first"  # the antenna (call, schedule label or period label) subtracted in a contrast
SECOND = "second"  # the antenna compared with it: a contrast is SECOND minus FIRST [dB]
CONTRAST = "contrast"  # "reference" (against the reference) | "pair" | "step" (neighbours)
CI_SIM_LOW = "ci_sim_low_db"  # interval simultaneous over the family of contrasts [dB]
CI_SIM_HIGH = "ci_sim_high_db"
P_FAMILY = "p_family"  # family-wise adjusted p (single-step max-T or Bonferroni)
SE_BOOT = "se_boot_db"  # bootstrap standard error of a contrast [dB]
PERIOD_START = "period_start"  # first moment of a period of a series of changes [UTC]

# --- modelled gain patterns and the measured-against-modelled check --------------------
# (spotkit.io.pattern, spotkit.compare.modelcheck)
AZIMUTH = "azimuth_deg"  # direction of a pattern point [deg clockwise from true north]
GAIN = "gain_dbi"  # modelled antenna gain [dBi]
FREQ_MHZ = "frequency_mhz"  # a pattern's frequency column [MHz] (instead of a band)
PREDICTED = "predicted_db"  # modelled B-A at the nominal layer height [dB]
PREDICTED_LOW = "predicted_low_db"  # lowest modelled B-A over the layer-height range [dB]
PREDICTED_HIGH = "predicted_high_db"  # highest modelled B-A over the layer-height range [dB]
MISFIT = "misfit_db"  # measured minus the nearest end of the predicted range (0 inside) [dB]
MISFIT_Z = "misfit_z"  # MISFIT / the measured estimate's standard error
DISAGREES = "disagrees"  # the cell's |MISFIT_Z| is beyond the family-wise critical value

# --- reach (spotkit.compare.reach) ------------------------------------------------------
STATIONS = "stations"  # distinct far stations reached
STATIONS_ONLY = "stations_only"  # far stations reached by this antenna and never by the other
HEARD = "heard"  # pairs in which this antenna was heard
P_HEARD = "p_heard"  # heard / pairs
P_HEARD_LOW = "p_heard_low"  # Wilson interval of P_HEARD
P_HEARD_HIGH = "p_heard_high"
DISTANCE_MEDIAN = "distance_median_km"  # over the distinct far stations reached [km]
DISTANCE_P90 = "distance_p90_km"
DISTANCE_FARTHEST = "distance_farthest_km"

# --- planning (spotkit.plan.duration) and checks against a simulation's truth -----------
HOURS = "hours"  # run length [h]
SE = "se_db"  # standard error of B minus A [dB]
CI_WIDTH = "ci_width_db"  # width of the confidence interval of B minus A [dB]
CI_WIDTH_SIM = "ci_width_sim_db"  # mean interval width over simulated runs [dB]
CI_WIDTH_SIM_SE = "ci_width_sim_se_db"  # its standard error [dB]
TRUTH = "truth_db"  # the simulated true B minus A [dB]
THRESHOLD = "threshold_db"  # a receiver's decode threshold [dB in 2500 Hz]
NOISE = "noise_db"  # a receiver's noise offset in the simulator [dB]

# --- following a running experiment (spotkit.monitor) ----------------------------------
CS_LOW = "cs_low_db"  # anytime-valid confidence sequence of B minus A, lower end [dB]
CS_HIGH = "cs_high_db"  # its upper end [dB]
CS_WIDTH = "cs_width_db"  # its width [dB]
WIDTH_SHRINK = "width_shrink"  # sequence width now / at the first update with an estimate
HOURS_MORE = "hours_more"  # hours more at the current rate until a stop rule can fire [h]
CAN_STOP = "can_stop"  # a stop rule fired (bool)
VERDICT = "verdict"  # plain-language verdict of the stop rules
ROWS = "rows"  # spot rows in the archive at an update
EFFECTIVE_CLUSTERS = "effective_clusters"  # Kish: pairs^2 / sum of pairs per cluster^2

# --- rejects table -----------------------------------------------------------------------
REJECT_FIELD = "field"
REJECT_VALUE = "value"
REJECT_REASON = "reason"
REJECT_COLUMNS = [SOURCE_FILE, SOURCE_ROW, REJECT_FIELD, REJECT_VALUE, REJECT_REASON]

#: Slot length of the weak-signal beacon modes, minutes (common practice).
SLOT_MINUTES = 2

UTC_DTYPE = pd.DatetimeTZDtype(unit="ns", tz="UTC")


@dataclass(frozen=True)
class Column:
    """One glossary entry.

    Examples
    --------
    >>> col = GLOSSARY[FREQ]
    >>> col.name, col.dtype, col.unit
    ('freq_hz', 'float64', 'Hz')
    >>> col.description
    'RF frequency of the received signal'
    """

    name: str
    dtype: object
    unit: str
    description: str


_CAT = "category"

GLOSSARY: dict[str, Column] = {
    c.name: c
    for c in [
        Column(TIME, UTC_DTYPE, "UTC", "time of the report as given, tz-aware UTC"),
        Column(SLOT, UTC_DTYPE, "UTC", "start of the transmit slot the report belongs to"),
        Column(TX_CALL, _CAT, "", "transmitting station's callsign, upper case"),
        Column(TX_LOCATOR, _CAT, "", "transmitter's Maidenhead locator, 2-8 characters"),
        Column(RX_CALL, _CAT, "", "receiving (reporting) station's callsign, upper case"),
        Column(RX_LOCATOR, _CAT, "", "receiver's Maidenhead locator, 2-8 characters"),
        Column(FREQ, "float64", "Hz", "RF frequency of the received signal"),
        Column(BAND, _CAT, "", "amateur band name from the IARU band plans, e.g. '20m'"),
        Column(SNR, "float64", "dB", "signal-to-noise ratio in a 2500 Hz bandwidth, whole dB"),
        Column(POWER, "float64", "dBm", "transmit power the spot reports"),
        Column(DRIFT, "float64", "Hz/min", "frequency drift reported by the decoder (optional)"),
        Column(TX_LAT, "float64", "deg",
               "latitude of the centre of the transmitter's locator cell"),
        Column(TX_LON, "float64", "deg",
               "longitude of the centre of the transmitter's locator cell"),
        Column(RX_LAT, "float64", "deg", "latitude of the centre of the receiver's locator cell"),
        Column(RX_LON, "float64", "deg", "longitude of the centre of the receiver's locator cell"),
        Column(DISTANCE, "float64", "km", "geodesic distance on WGS-84"),
        Column(BEARING, "float64", "deg", "azimuth at the transmitter towards the receiver, 0-360"),
        Column(REVERSE_BEARING, "float64", "deg",
               "azimuth at the receiver towards the transmitter, 0-360"),
        Column(SOURCE_FILE, _CAT, "", "file the row came from"),
        Column(SOURCE_ROW, "int64", "", "1-based data-row number in that file (header excluded)"),
    ]
}

#: Columns a reader must find (or be told) in an input file.
INPUT_FIELDS = [TIME, TX_CALL, TX_LOCATOR, RX_CALL, RX_LOCATOR, FREQ, SNR, POWER, DRIFT]
REQUIRED_INPUT = [TIME, TX_CALL, TX_LOCATOR, RX_CALL, RX_LOCATOR, FREQ, SNR, POWER]
#: Columns added by enrichment.
DERIVED = [TX_LAT, TX_LON, RX_LAT, RX_LON, DISTANCE, BEARING, REVERSE_BEARING]
#: The canonical table, in order.
CANONICAL = [TIME, SLOT, TX_CALL, TX_LOCATOR, RX_CALL, RX_LOCATOR, FREQ, BAND, SNR, POWER,
             DRIFT, *DERIVED, SOURCE_FILE, SOURCE_ROW]
#: The columns that identify one report; two rows equal on all of them are duplicates.
REPORT_KEY = [SLOT, TX_CALL, TX_LOCATOR, RX_CALL, RX_LOCATOR, FREQ, SNR, POWER]

#: Short field names used by the CLI's --map / --unit options.
CLI_FIELDS = {
    "time": TIME,
    "tx_call": TX_CALL,
    "tx_locator": TX_LOCATOR,
    "rx_call": RX_CALL,
    "rx_locator": RX_LOCATOR,
    "frequency": FREQ,
    "snr": SNR,
    "power": POWER,
    "drift": DRIFT,
}


def apply_dtypes(df: pd.DataFrame) -> pd.DataFrame:
    """Return ``df`` with every glossary column it has cast to the glossary dtype.

    Columns not in the glossary are left as they are.

    Examples
    --------
    >>> df = pd.DataFrame({"tx_call": ["Q1ABC", "Q2XY"], "snr_db": [-12, -20],
    ...                    "comment": ["new wire", "old wire"]})
    >>> out = apply_dtypes(df)
    >>> str(out["tx_call"].dtype), str(out["snr_db"].dtype)
    ('category', 'float64')
    >>> out["comment"].dtype == df["comment"].dtype
    True
    """
    out = df.copy()
    for name in out.columns:
        col = GLOSSARY.get(name)
        if col is None:
            continue
        if str(out[name].dtype) == str(col.dtype):
            continue
        out[name] = out[name].astype(col.dtype)
    return out


def empty_spots() -> pd.DataFrame:
    """An empty canonical spot table with the glossary dtypes.

    Examples
    --------
    >>> spots = empty_spots()
    >>> len(spots), spots.columns[:4].tolist()
    (0, ['time_utc', 'slot_utc', 'tx_call', 'tx_locator'])
    >>> str(spots["time_utc"].dtype)
    'datetime64[ns, UTC]'
    """
    return pd.DataFrame(
        {name: pd.Series(dtype=GLOSSARY[name].dtype) for name in CANONICAL}
    )


def empty_rejects() -> pd.DataFrame:
    """An empty rejects table.

    Examples
    --------
    >>> empty_rejects().columns.tolist()
    ['source_file', 'source_row', 'field', 'value', 'reason']
    """
    return pd.DataFrame(
        {
            SOURCE_FILE: pd.Series(dtype="object"),
            SOURCE_ROW: pd.Series(dtype="int64"),
            REJECT_FIELD: pd.Series(dtype="object"),
            REJECT_VALUE: pd.Series(dtype="object"),
            REJECT_REASON: pd.Series(dtype="object"),
        }
    )


def describe() -> pd.DataFrame:
    """The glossary as a table (name, dtype, unit, description).

    Examples
    --------
    >>> table = describe()
    >>> row = table.loc[table["name"] == "snr_db", ["name", "dtype", "unit"]]
    >>> print(row.to_string(index=False))
      name   dtype unit
    snr_db float64   dB
    """
    return pd.DataFrame(
        [(c.name, str(c.dtype), c.unit, c.description) for c in GLOSSARY.values()],
        columns=["name", "dtype", "unit", "description"],
    )


__all__ = [n for n in dir() if n.isupper()] + [
    "Column", "apply_dtypes", "empty_spots", "empty_rejects", "describe",
]
