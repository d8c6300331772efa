"""Measured against modelled: B minus A per cell against what two gain patterns predict.

Each pair's path has a take-off (elevation) angle from the mirror hop geometry
(:func:`spotkit.geo.geodesic.elevation_angle`) and a bearing at the station under test.
Antenna B's modelled gain minus antenna A's there (:class:`spotkit.io.pattern.GainPattern`,
bilinear in elevation and azimuth) is the pair's predicted B - A. The reflection height
is not known, so the prediction is made at every height of a grid spanning
``layer_heights_km`` (default 250-400 km, a common-practice F-layer range, from memory)
as well as at the nominal height: a cell's predicted range is the lowest to highest *cell
mean* over those heights (the height taken as common to the cell's pairs), its central
prediction the mean at the nominal height.

The measured B - A per cell is the censored estimate of
:func:`spotkit.compare.estimate.compare_antennas` grouped by band, elevation bin and
bearing sector, with its cluster-bootstrap interval. The goodness-of-fit statistic is

    X^2 = sum over cells of (m_i - nearest(m_i, [lo_i, hi_i]))^2 / s_i^2,

the distance of the measured value from the predicted *range* (0 inside it) in units of
its standard error ``s_i``, taken from the side of the interval that faces the range
(``(m - CI_low) / z`` when the range is below, ``(CI_high - m) / z`` above; z the normal
quantile of the interval's coverage), so an asymmetric bootstrap interval is respected.
Its p-value is the chi-square tail with one degree of freedom per cell
(``scipy.stats.chi2.sf``). When the true value lies in the range, each term is at most
the squared standard score of the estimate, so X^2 is stochastically below a chi-square
with that many degrees of freedom and the test keeps its level (it is conservative by how
wide the ranges are). The cells listed as disagreeing are those whose |z| exceeds the
Bonferroni critical value ``z_{1 - alpha / (2 m)}`` over the ``m`` cells, a statement
that holds for all cells at once.

Cells whose estimate rests on fewer than ``min_clusters`` clusters (default
:data:`spotkit.compare.estimate.MIN_CLUSTERS`) are set aside with the reason: with two to
four receivers the bootstrap interval is far too narrow (a simulated vertical-vs-dipole run
rejected the true patterns at chi-square 92 on 17 cells through one 2-receiver cell whose
interval was 0.17 dB wide).

Known limits: cells are treated as independent; they share receivers (the clusters), so
when receivers' own effects differ between antennas the cells are positively correlated
and the chi-square p is somewhat too small. The elevation angle is a model (mirror hops,
one height per cell); a pattern that is right at one height and wrong at another cannot be
told from a height the grid does not include.

References
----------
.. [1] K. Pearson (1900) / R. A. Fisher: the sum of squared standard normal scores is
   chi-square with one degree of freedom per term (textbook, from memory).
.. [2] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997
   (cluster bootstrap intervals).
.. [3] ITU-R P.533 (mirror-reflection hop geometry; from memory).
"""
from __future__ import annotations

import json
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import stats as sps

from spotkit import columns as C
from spotkit._validate import check_confidence
from spotkit.compare.estimate import MIN_CLUSTERS, ComparisonResult, group_label
from spotkit.compare.grouping import add_group_keys, group_columns
from spotkit.errors import InputError, UsageError
from spotkit.geo.geodesic import elevation_angle
from spotkit.io.pattern import GainPattern

#: Default range of reflection heights carried through the prediction [km].
DEFAULT_LAYER_HEIGHTS_KM = (250.0, 400.0)
#: Heights evaluated across the range.
N_HEIGHTS = 7
#: Columns of :attr:`PatternCheck.cells` after the group columns.
CHECK_COLUMNS = [C.GROUP, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.PAIRS, C.PREDICTED,
                 C.PREDICTED_LOW, C.PREDICTED_HIGH, C.MISFIT, C.MISFIT_Z, C.DISAGREES]


def _as_pattern(p) -> GainPattern:
    return p if isinstance(p, GainPattern) else GainPattern(p)


def predict_pairs(pairs: pd.DataFrame, pattern_a, pattern_b, *,
                  layer_heights_km=(300.0,)) -> np.ndarray:
    """Modelled B - A [dB] of each pair at each reflection height.

    Parameters
    ----------
    pairs : pandas.DataFrame
        Has ``C.BAND``, ``C.DISTANCE`` [km] and ``C.BEARING`` [deg at the station under
        test].
    pattern_a, pattern_b : GainPattern or pandas.DataFrame
        The modelled patterns of A and B (:func:`spotkit.io.pattern.read_pattern`).
    layer_heights_km : sequence of float
        Reflection heights [km].

    Returns
    -------
    numpy.ndarray
        Shape (pairs, heights) [dB].

    Examples
    --------
    Two invented omnidirectional patterns 3 dB apart above 10 deg, equal below:

    >>> grid = pd.DataFrame({"band": "20m", "elevation_deg": [0.0, 10.0, 90.0],
    ...                      "azimuth_deg": 0.0, "gain_dbi": [0.0, 0.0, 0.0]})
    >>> b = grid.assign(gain_dbi=[0.0, 3.0, 3.0])
    >>> pairs = pd.DataFrame({"band": ["20m", "20m"], "distance_km": [500.0, 3000.0],
    ...                       "bearing_deg": [0.0, 90.0]})
    >>> predict_pairs(pairs, grid, b, layer_heights_km=[250.0, 400.0]).round(2).tolist()
    [[3.0, 3.0], [0.75, 2.31]]

    The 3,000 km path leaves at 2.5 deg with a 250 km layer and 7.7 deg with 400 km, on
    the ramp between 0 and 10 deg (3 dB times 0.25 and 0.77):

    >>> np.round(elevation_angle(3000.0, np.array([250.0, 400.0])), 1).tolist()
    [2.5, 7.7]
    """
    pa, pb = _as_pattern(pattern_a), _as_pattern(pattern_b)
    h = np.asarray(layer_heights_km, dtype=float)
    dist = pairs[C.DISTANCE].to_numpy(dtype=float)
    brg = pairs[C.BEARING].to_numpy(dtype=float)
    band = pairs[C.BAND].astype(str).to_numpy()
    el = elevation_angle(dist[:, None], h[None, :])
    el = np.atleast_2d(np.asarray(el, dtype=float))
    out = np.full(el.shape, np.nan)
    for bnd in pd.unique(band):
        m = band == bnd
        e, b = el[m], np.broadcast_to(brg[m][:, None], el[m].shape)
        out[m] = pb.gain_db(bnd, e, b) - pa.gain_db(bnd, e, b)
    return out


@dataclass
class PatternCheck:
    """Measured B - A per cell against the patterns' prediction, with a chi-square test.

    Attributes
    ----------
    cells : pandas.DataFrame
        Group columns then :data:`CHECK_COLUMNS`, one row per cell with an estimate.
    statistic : float
        X^2 (module docstring).
    df : int
        Degrees of freedom (cells).
    p_value : float
        ``scipy.stats.chi2.sf(statistic, df)``.
    confidence : float
        Coverage of the intervals; ``1 - confidence`` is the test's level.
    critical_z : float
        Bonferroni critical |z| for a cell to be listed as disagreeing.
    a, b : str
        Antenna names; ``pattern_a``, ``pattern_b``: the pattern files' names.
    options : dict
        Layer heights and the comparison's options.
    set_aside : dict
        Cells with an estimate that were not tested: label -> reason.
    """

    cells: pd.DataFrame
    statistic: float
    df: int
    p_value: float
    confidence: float
    critical_z: float
    a: str = "A"
    b: str = "B"
    pattern_a: str = ""
    pattern_b: str = ""
    options: dict = field(default_factory=dict)
    set_aside: dict = field(default_factory=dict)

    @property
    def rejected(self) -> bool:
        """The patterns' prediction is rejected at level ``1 - confidence``."""
        return bool(self.df > 0 and self.p_value < 1.0 - self.confidence)

    @property
    def disagreeing(self) -> pd.DataFrame:
        """The cells whose measured B - A is outside the prediction beyond chance."""
        return self.cells[self.cells[C.DISAGREES]]

    def to_frame(self) -> pd.DataFrame:
        """The cells table."""
        return self.cells.copy()

    def summary(self) -> str:
        """One sentence: accepted or rejected, with X^2, df and p."""
        word = ("does not agree with" if self.rejected else "is consistent with")
        n_bad = int(self.cells[C.DISAGREES].sum())
        text = (f"measured B - A {word} the patterns' prediction: chi-square "
                f"{self.statistic:.1f} on {self.df} cells, p = {self.p_value:.3g}")
        if n_bad:
            text += f"; {n_bad} cell{'s' if n_bad > 1 else ''} disagree"
        return text

    def to_dict(self) -> dict:
        """Plain-Python form (JSON-ready)."""
        def num(x):
            if isinstance(x, (bool, np.bool_)):
                return bool(x)
            if isinstance(x, (int, np.integer)):
                return int(x)
            if isinstance(x, (float, np.floating)):
                return None if not np.isfinite(x) else float(x)
            return x

        return {"a": self.a, "b": self.b, "pattern_a": self.pattern_a,
                "pattern_b": self.pattern_b, "statistic": float(self.statistic),
                "df": int(self.df), "p_value": float(self.p_value),
                "confidence": float(self.confidence), "critical_z": float(self.critical_z),
                "rejected": self.rejected, "summary": self.summary(),
                "options": self.options, "set_aside": dict(self.set_aside),
                "cells": [{k: num(v) for k, v in r.items()}
                          for r in self.cells.to_dict("records")]}

    def to_json(self, indent: int = 2) -> str:
        """JSON text of :meth:`to_dict`."""
        return json.dumps(self.to_dict(), indent=indent)

    def __str__(self) -> str:
        show = self.cells[[C.GROUP, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.PREDICTED_LOW,
                           C.PREDICTED_HIGH, C.MISFIT_Z, C.DISAGREES]].copy()
        show.columns = ["cell", "measured dB", "CI low", "CI high", "model low",
                        "model high", "z", "disagrees"]
        show["disagrees"] = np.where(show["disagrees"], "yes", "")
        head = (f"measured against modelled: B = {self.b} ({self.pattern_b}), A = {self.a} "
                f"({self.pattern_a}); layer heights "
                f"{self.options.get('layer_heights_km')} km\n")
        tail = "".join(f"\nset aside: {k}: {v}" for k, v in self.set_aside.items())
        return (head + show.round(2).to_string(index=False) + tail + "\n"
                + self.summary())


def check_patterns(result: ComparisonResult, pattern_a, pattern_b, *,
                   layer_heights_km=DEFAULT_LAYER_HEIGHTS_KM, n_heights: int = N_HEIGHTS,
                   confidence: float | None = None,
                   min_clusters: int = MIN_CLUSTERS) -> PatternCheck:
    """Check a comparison's per-cell B - A against two modelled gain patterns.

    Parameters
    ----------
    result : ComparisonResult
        From :func:`spotkit.compare.estimate.compare_antennas` with groups (``by``; best
        ``"band,elevation,bearing"``).
    pattern_a, pattern_b : GainPattern or pandas.DataFrame
        Modelled patterns of A and B (:func:`spotkit.io.pattern.read_pattern`).
    layer_heights_km : (float, float)
        Lowest and highest reflection height [km]; ``n_heights`` heights across it and the
        comparison's own ``layer_height_km`` are evaluated.
    n_heights : int
        Heights across the range.
    confidence : float, optional
        Default the comparison's; the test's level is ``1 - confidence``.
    min_clusters : int
        Cells whose estimate rests on fewer clusters (receivers; transmitters in the
        receive design) are set aside (:attr:`PatternCheck.set_aside`, with the reason):
        their bootstrap intervals are too narrow to test against (with 2-4 receivers a
        resample can hardly differ from the data).

    Returns
    -------
    PatternCheck

    Raises
    ------
    UsageError
        The comparison has no groups, or a bad height range.
    InputError
        The patterns share no band with the spots (cells of a band only one pattern or
        neither has are set aside, with the reason).

    Examples
    --------
    See ``tests/compare/test_modelcheck.py`` (a simulated vertical against a dipole: the
    true patterns are accepted, a pattern 3 dB off at low angles is rejected).
    """
    if not result.by:
        raise UsageError("the pattern check needs groups: compare with --by (e.g. "
                         "band,elevation,bearing)")
    lo_h, hi_h = (float(x) for x in layer_heights_km)
    if not (0 < lo_h <= hi_h):
        raise UsageError(f"layer heights must be 0 < low <= high km, got {lo_h:g}, {hi_h:g}")
    conf = check_confidence(result.confidence if confidence is None else confidence)
    nominal = float(result.options.get("layer_height_km", 300.0))
    heights = np.unique(np.append(np.linspace(lo_h, hi_h, max(int(n_heights), 2)), nominal))
    opts = result.options
    gopts = dict(distance_edges=opts.get("distance_edges"),
                 bearing_width_deg=opts.get("bearing_width_deg", 45.0),
                 hour=opts.get("hour", "utc"), elevation_edges=opts.get("elevation_edges"),
                 layer_height_km=nominal)
    gopts = {k: v for k, v in gopts.items() if v is not None}
    pa, pb = _as_pattern(pattern_a), _as_pattern(pattern_b)
    modelled = sorted(set(pa.bands) & set(pb.bands))
    keyed = add_group_keys(result.pairs, result.by, **gopts)
    in_bands = keyed[C.BAND].astype(str).isin(modelled).to_numpy()
    if not in_bands.any():
        raise InputError(f"{pa.source} and {pb.source} have no band in common with the "
                         f"spots (patterns: {', '.join(pa.bands)} / {', '.join(pb.bands)}; "
                         f"spots: {', '.join(sorted(keyed[C.BAND].astype(str).unique()))})")
    keyed = keyed[in_bands]
    keys = group_columns(result.by)
    pred = predict_pairs(keyed, pa, pb, layer_heights_km=heights)
    pcols = [f"_h{i}" for i in range(len(heights))]
    frame = pd.DataFrame(pred, columns=pcols, index=keyed.index)
    frame[keys] = keyed[keys]
    frame = frame.dropna(subset=keys)
    means = frame.groupby(keys, observed=True, dropna=True)[pcols].mean()
    i_nom = int(np.flatnonzero(heights == nominal)[0])
    cellpred = pd.DataFrame({C.PREDICTED: means[pcols[i_nom]],
                             C.PREDICTED_LOW: means[pcols].min(axis=1),
                             C.PREDICTED_HIGH: means[pcols].max(axis=1)}).reset_index()
    groups = result.groups
    groups = groups[np.isfinite(groups[C.B_MINUS_A].to_numpy(dtype=float))
                    & np.isfinite(groups[C.CI_LOW].to_numpy(dtype=float))]
    few = groups[C.CLUSTERS].to_numpy(dtype=float) < int(min_clusters)
    set_aside = {group_label(r, opts.get("hour", "utc")):
                 f"only {int(r[C.CLUSTERS])} clusters (< {int(min_clusters)}): interval "
                 "too unreliable to test against" for r in groups[few].to_dict("records")}
    groups = groups[~few]
    if C.BAND in groups:
        unmodelled = ~groups[C.BAND].astype(str).isin(modelled).to_numpy()
        set_aside.update({group_label(r, opts.get("hour", "utc")):
                          f"no modelled pattern for band {r[C.BAND]} in both files"
                          for r in groups[unmodelled].to_dict("records")})
        groups = groups[~unmodelled]
    cells = groups[keys + [C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.PAIRS]].merge(
        cellpred, on=keys, how="inner")
    z_ci = float(sps.norm.ppf(0.5 + conf / 2.0))
    m = cells[C.B_MINUS_A].to_numpy(dtype=float)
    lo = cells[C.PREDICTED_LOW].to_numpy(dtype=float)
    hi = cells[C.PREDICTED_HIGH].to_numpy(dtype=float)
    misfit = m - np.clip(m, lo, hi)
    se_down = (m - cells[C.CI_LOW].to_numpy(dtype=float)) / z_ci
    se_up = (cells[C.CI_HIGH].to_numpy(dtype=float) - m) / z_ci
    se = np.where(misfit > 0, se_down, se_up)  # the side facing the predicted range
    se = np.maximum(se, 1e-6)
    z = misfit / se
    n = len(cells)
    crit = float(sps.norm.ppf(1.0 - (1.0 - conf) / (2.0 * max(n, 1))))
    cells[C.MISFIT] = misfit
    cells[C.MISFIT_Z] = z
    cells[C.DISAGREES] = np.abs(z) > crit
    cells.insert(0, C.GROUP, [group_label(r, opts.get("hour", "utc"))
                              for r in cells.to_dict("records")])
    stat = float(np.sum(z * z))
    p = float(sps.chi2.sf(stat, n)) if n else float("nan")
    return PatternCheck(cells=cells[keys + CHECK_COLUMNS].reset_index(drop=True),
                        statistic=stat, df=n, p_value=p, confidence=conf, critical_z=crit,
                        a=result.a, b=result.b, pattern_a=pa.source, pattern_b=pb.source,
                        set_aside=set_aside,
                        options={"min_clusters": int(min_clusters),
                                 "layer_heights_km": [lo_h, hi_h],
                                 "layer_height_km": nominal, "n_heights": int(n_heights),
                                 "by": list(result.by)})


__all__ = ["DEFAULT_LAYER_HEIGHTS_KM", "N_HEIGHTS", "CHECK_COLUMNS", "predict_pairs",
           "PatternCheck", "check_patterns"]
