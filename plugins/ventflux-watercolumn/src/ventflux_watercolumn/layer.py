"""Vertical binning of profiles and the plume layer's top, core and bottom.

Binning: each profile's samples are averaged in depth bins ``bin_size``
thick (edges at whole multiples of ``bin_size``), one array ``(P, Z)`` per
quantity; a bin without samples is NaN.

Detection: on each profile, a bin is anomalous where its mean anomaly
exceeds ``factor`` times the background noise (the per-sample robust
standard deviation of the tracer's background residuals: bin means are
less noisy, so this is conservative; ``factor`` 3 by default, common
practice, no source). The layer is the contiguous run of anomalous bins
holding the profile's largest anomaly (its *core*); its *top* and *bottom*
are the run's shallowest and deepest bins. Depths are bin centres, so they
are known to ± half a bin. With ``tracer="either"``, a bin is anomalous
where Δθ or the optical anomaly exceeds its threshold, and the core is
where the larger of the two, in units of its own threshold, peaks.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def bin_edges(depth, bin_size):
    """Depth-bin edges, m, covering ``depth`` at whole multiples of ``bin_size``."""
    lo = np.floor(np.min(depth) / bin_size) * bin_size
    hi = np.ceil(np.max(depth) / bin_size + 1e-9) * bin_size
    return np.arange(lo, hi + 0.5 * bin_size, bin_size)


def bin_profiles(prof, depth, edges, n_profiles, **columns):
    """Bin means ``(P, Z)`` of each column by profile and depth bin, and the sample counts.

    Samples with ``prof < 0`` are left out. Returns ``(counts, {name: means})``.
    """
    nz = edges.size - 1
    zi = np.clip(np.searchsorted(edges, depth, side="right") - 1, 0, nz - 1)
    use = prof >= 0
    cell = prof[use] * nz + zi[use]
    counts = np.bincount(cell, minlength=n_profiles * nz).reshape(n_profiles, nz)
    out = {}
    with np.errstate(invalid="ignore", divide="ignore"):
        for name, v in columns.items():
            v = np.asarray(v)
            if v.ndim == 1:
                # (P, Z) here, (P, Z, K) below; float: bincount sums the weights (numpy's stub says integer)
                s: np.ndarray = np.bincount(cell, v[use], minlength=n_profiles * nz).reshape(n_profiles, nz)
                out[name] = np.where(counts > 0, s / np.maximum(counts, 1), np.nan)
            else:  # several columns at once: (N, K) → (P, Z, K)
                s = np.stack([np.bincount(cell, v[use, k], minlength=n_profiles * nz) for k in range(v.shape[1])],
                             axis=-1).reshape(n_profiles, nz, -1)
                out[name] = np.where((counts > 0)[..., None], s / np.maximum(counts, 1)[..., None], np.nan)
    return counts, out


@dataclass(frozen=True)
class LayerIndices:
    """Per profile: bin index of the layer's top, core and bottom (−1 where no layer)."""

    top: np.ndarray
    core: np.ndarray
    bottom: np.ndarray
    mask: np.ndarray  # (P, Z) bins inside the detected layer

    @property
    def found(self):
        return self.core >= 0


def detect_layer(score) -> LayerIndices:
    """The layer on each profile from ``score`` (P, Z): anomaly over its threshold (> 1 is anomalous).

    NaN bins (no samples) count as not anomalous.
    """
    P, Z = score.shape
    s = np.where(np.isfinite(score), score, -np.inf)
    core = np.argmax(s, axis=1)
    above = s > 1.0
    has = above[np.arange(P), core]
    idx = np.arange(Z)[None, :]
    c = core[:, None]
    top = np.where(~above & (idx < c), idx, -1).max(axis=1) + 1
    bottom = np.where(~above & (idx > c), idx, Z).min(axis=1) - 1
    mask = has[:, None] & (idx >= top[:, None]) & (idx <= bottom[:, None])
    none = np.full(P, -1)
    return LayerIndices(top=np.where(has, top, none), core=np.where(has, core, none),
                        bottom=np.where(has, bottom, none), mask=mask)
