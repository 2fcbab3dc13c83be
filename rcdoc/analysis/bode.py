"""The Bode band of a stage: the spread of its gain and phase over the sweep, gathered
chunk by chunk from the Monte Carlo rows that are stable.

What it is for: the response chart's bands (outer: minimum and maximum of every
stable sample; inner: 5 and 95 percentiles of the first ``spread.band_samples``)
— drawing data only: no metric, verdict or JSON number reads it. That is why an
analysis for ``check`` or ``diff`` leaves it out (rcdoc.analysis.analyse,
``bode=False``) and a build adds it before drawing (``complete`` there), from
the same chunks and rows: the same numbers as an analysis that gathered it.

What it must not do: change the analysis's rows or the order in which an
Evaluator computes what the metrics read (it asks for the gain and phase the
metrics share, nothing else).
"""

from __future__ import annotations

import numpy as np

from rcdoc.analysis import spread, sweep_math
from rcdoc.analysis.evaluate import db
from rcdoc.analysis.results import ResponseBand

BAND_PERCENTILES = (5.0, 95.0)


class Envelope:
    """Running minimum and maximum over chunks (for bands over every sample: the Bode
    band's outer band here, the time responses' bands in rcdoc.analysis.analyse)."""

    def __init__(self):
        self.lo = self.hi = self.plo = self.phi = None

    def add(self, a, b):
        self.merge(a.min(axis=0), a.max(axis=0), *((None, None) if b is None else
                                                    (b.min(axis=0), b.max(axis=0))))

    def merge(self, amin, amax, bmin=None, bmax=None):
        """Add one chunk's extremes (rows reduced already)."""
        self.lo = amin if self.lo is None else np.minimum(self.lo, amin)
        self.hi = amax if self.hi is None else np.maximum(self.hi, amax)
        if bmin is not None:
            self.plo = bmin if self.plo is None else np.minimum(self.plo, bmin)
            self.phi = bmax if self.phi is None else np.maximum(self.phi, bmax)


class Gathering:
    """A stage's Bode band as its chunks come: the envelope of every stable Monte
    Carlo row and float32 copies (one frequency a row) of the first rows."""

    def __init__(self):
        self.env = Envelope()
        self.gains: list = []
        self.phases: list = []

    def add(self, ev, sel, h_nominal: np.ndarray) -> None:
        """The rows ``sel`` (a slice or an index array) of a chunk's Evaluator ``ev``."""
        # The phase's extremes are taken in radians: degrees are a monotone scaling
        # (the same numbers).
        gain, raw = ev.gain_db[sel], ev.phase_unwrapped[sel]
        lo, hi = raw.min(axis=0), raw.max(axis=0)
        ph = sweep_math.near_reference(raw, h_nominal, lo, hi)
        if ph is not raw:
            lo, hi = ph.min(axis=0), ph.max(axis=0)
        self.env.merge(gain.min(axis=0), gain.max(axis=0), np.degrees(lo), np.degrees(hi))
        room = spread.band_samples(gain.shape[1]) - sum(x.shape[1] for x in self.gains)
        if room > 0:
            # Kept as float32, one frequency per contiguous row (the percentiles select
            # along rows); degrees computed in double and rounded once, as before.
            self.gains.append(spread.transposed(gain[:room], np.float32))
            self.phases.append(spread.transposed(ph[:room], np.float32, sweep_math.degrees))

    def band(self, h_nominal: np.ndarray) -> ResponseBand:
        """The band; with no stable sample, the nominal curve alone."""
        if not self.gains:
            g0 = db(h_nominal)[:, None].astype(np.float32)
            p0 = np.degrees(np.unwrap(np.angle(h_nominal)))[:, None].astype(np.float32)
            self.gains, self.phases = [g0], [p0]
            self.env.add(g0.T, p0.T)
            return _band(self.gains, self.phases, self.env, drawn=0)
        return _band(self.gains, self.phases, self.env)


def _band(gains, phases, env: Envelope, drawn: int | None = None) -> ResponseBand:
    # On the float32 copies the band keeps: a drawn band needs no more digits,
    # and the selection runs over half the bytes (spread.row_percentiles:
    # np.percentile's values, by a faster selection).
    g = np.concatenate(gains, axis=1)          # (frequencies, samples)
    p = np.concatenate(phases, axis=1)
    g_lo, g_hi = spread.row_percentiles(g, BAND_PERCENTILES, overwrite=True).astype(float)
    p_lo, p_hi = spread.row_percentiles(p, BAND_PERCENTILES, overwrite=True).astype(float)
    return ResponseBand(gain_min=env.lo, gain_max=env.hi, gain_lo=g_lo, gain_hi=g_hi,
                        phase_min=env.plo, phase_max=env.phi, phase_lo=p_lo, phase_hi=p_hi,
                        drawn=g.shape[1] if drawn is None else drawn)
