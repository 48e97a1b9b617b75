"""A forward emulator of the integral plume model, for inverting many Monte Carlo draws at once.

For one ambient column (one stratification) the integral model is solved
once on a grid over log buoyancy flux, log entrainment coefficient and log
stratification scale (a factor on N²); each draw is then inverted on that
grid instead of by repeated integration. In these coordinates the rise
height is close to linear — the similarity scaling z ∝ F^(1/4) α^(-1/2)
N^(-3/4) (so ∝ s^(-3/8)) is exact in a uniform stratification [1]_ — so
4-point Lagrange interpolation along each axis is accurate to about 1e-6 in
log z on a grid of a few hundred members.

**Similarity in the entrainment coefficient.** For a pure plume the
top-hat equations are invariant under Q → λ²Q, M → λ²M, F → λ²F with
α → λα and the height unchanged (substitute into dQ/dz = 2α(πM)^(1/2),
dM/dz = FQ/M, dF/dz = −N²(z) Q: every term scales alike, for any N(z); the
plume's temperature and salinity, fluxes over Q, do not change, so neither
does the non-linear equation of state's buoyancy). The rise and spreading
heights and the spreading anomaly are therefore functions of G = F/α² (and
the stratification scale) alone, and the spreading volume flux is α² times
one. The emulator tabulates log G, one coordinate instead of two: a measured
cast's layering puts fine structure into the rise as a function of the
flux, which a dense 1-D grid follows where a coarse grid in α could not.
(The integrator steps a pure plume on the grid of its G, not of F, so the
invariance holds for the discrete solutions too, to rounding; what remains
between the nodes is the rise's step-to-step roughness along G, which the
check below measures with the interpolation error.)

The interpolation error is controlled, not assumed: after the build, the
model is integrated directly at points between the nodes and compared with
the interpolant; the grid is refined until the worst difference is below
``TOLERANCE`` in log rise height (a quarter of it in heat power), or the
emulator is refused (the caller then integrates every draw). Draws whose
stencil leaves the grid or touches a member that escaped the column are
returned as NaN for the caller to solve directly.

References
----------
.. [1] Morton, B. R., Taylor, G. I. and Turner, J. S. (1956). Proc. R. Soc. Lond. A 234, 1–23.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import closed_form

#: Worst interpolation error accepted in log rise height (choice made here: heat power ∝ z⁴, so 1e-4
#: in log z is 4e-4 in heat power, inside the 5e-4 asked of every draw).
TOLERANCE = 1e-4
#: Nodes along log G (= log F − 2 log α) at the start, and the most after refinement (choices made here:
#: one forward integration of a 1-D grid of a thousand members costs about a tenth of one secant sweep
#: over ten thousand draws).
F_NODES = 64
MAX_F_NODES = 1024
#: Worst error (log rise height) of an emulator still used to start each draw's direct inversion (choice
#: made here: a start within 1 % in the rise is a start within about 4 % in heat power, a sweep or two away).
GUIDE_TOLERANCE = 1e-2
#: Refinement factor of the log G grid between error checks.
REFINE = 2
#: The entrainment coefficient the closed-form rise's coefficient belongs to (the integral model's default,
#: MTT's [1]_ top-hat value), used only to place the log G grid's ends.
REFERENCE_ENTRAINMENT = 0.093 * np.sqrt(2.0)
#: Nodes along a drawn log α or log s axis (4-point stencils need at least 4).
PARAMETER_NODES = 5
#: Points between the nodes integrated directly to measure the interpolation error.
CHECK_POINTS = 48


@dataclass
class ForwardEmulator:
    """Grid of the integral model's outcome for one column and one level (SI, logs of positive quantities)."""

    level: str
    log_F: np.ndarray  # nodes of log G = log F − 2 log α (the similarity variable, see the module notes)
    log_alpha: np.ndarray  # one node: the α the grid was integrated with (any α gives the same G-curves)
    log_scale: np.ndarray
    fields: dict  # name -> array (1, n_scale, n_G); volume flux divided by the grid's α²
    error: float  # worst measured interpolation error in log rise height
    guide_only: bool = False  # above TOLERANCE: a starting point for direct inversion, not an answer

    def to_g(self, log_F, alpha):
        """log G of (log F, α) per draw."""
        return np.asarray(log_F, float) - 2.0 * np.log(np.asarray(alpha, float))

    def curves(self, alpha, scale, names=("level",), start=None):
        """Fields along the F nodes for each draw, interpolated in α and s: (n, n_F, len(names)).

        With ``start`` (n ints) only the four F nodes from ``start`` on are
        interpolated: (n, 4, len(names)).
        """
        table = self._stacked()[..., [self.names.index(k) for k in names]]
        n = np.size(alpha)
        wa, ia = _axis_weights(np.log(alpha), self.log_alpha, n)
        ws, is_ = _axis_weights(np.log(scale), self.log_scale, n)
        if start is None:
            cols = slice(None)
            shape = (n, table.shape[2], len(names))
        else:
            cols = start[:, None] + np.arange(4)[None, :]
            shape = (n, 4, len(names))
        out = np.zeros(shape)
        for a in range(wa.shape[1]):
            for b in range(ws.shape[1]):
                rows_a = (ia + a)[:, None] if start is not None else (ia + a)
                rows_b = (is_ + b)[:, None] if start is not None else (is_ + b)
                out += (wa[:, a] * ws[:, b])[:, None, None] * table[rows_a, rows_b, cols]
        return out

    def invert(self, z, curves, alpha):
        """log F [m⁴/s³] giving rise height ``z`` [m] for each draw; NaN where the grid cannot answer."""
        target = np.log(z)
        curve = curves[..., 0]  # (n, n_F) log z at every F node (``curves`` of the level only)
        n, nf = curve.shape
        ok = np.isfinite(target) & np.isfinite(curve).all(axis=1)
        # bracket: the last node below the target (the rise grows with F)
        below = (curve < target[:, None]).sum(axis=1) - 1
        ok &= (below >= 0) & (below <= nf - 2)
        i0 = np.clip(below - 1, 0, nf - 4)
        rows = np.arange(n)
        c = np.stack([curve[rows, i0 + k] for k in range(4)], axis=1)
        bi = np.clip(below, 0, nf - 2)
        y0, y1 = curve[rows, bi], curve[rows, bi + 1]
        with np.errstate(divide="ignore", invalid="ignore"):
            r = (bi - i0) + np.clip((target - y0) / (y1 - y0), 0.0, 1.0)
        for _ in range(6):  # Newton on the local cubic
            w, dw = _lagrange4(r)
            f = (w * c).sum(axis=1) - target
            df = (dw * c).sum(axis=1)
            with np.errstate(divide="ignore", invalid="ignore"):
                r = np.clip(r - f / df, 0.0, 3.0)
        h = self.log_F[1] - self.log_F[0]
        log_g = self.log_F[0] + (i0 + r) * h
        return np.where(ok, log_g + 2.0 * np.log(np.broadcast_to(np.asarray(alpha, float), log_g.shape)), np.nan)

    def fields_at(self, names, log_F, alpha, scale):
        """Interpolated fields ``names`` at (log F, α, s) per draw: dict name -> array."""
        log_a = np.log(np.asarray(alpha, float))
        w, i0 = _weights(np.asarray(log_F, float) - 2.0 * log_a, self.log_F)
        local = self.curves(alpha, scale, names, start=i0)  # (n, 4, len(names))
        out = {}
        for m, name in enumerate(names):
            v = (w * local[..., m]).sum(axis=1)
            if name == "volume_flux":  # Q scales with α² at fixed G
                v = v + 2.0 * log_a
            out[name] = np.exp(v) if name in _LOGGED else v
        return out

    @property
    def names(self):
        return list(self.fields)

    def _stacked(self):
        if getattr(self, "_table", None) is None:
            self._table = np.stack([self.fields[k] for k in self.names], axis=-1)
        return self._table


_LOGGED = ("level", "maximum", "spreading", "volume_flux")


def _lagrange4(r):
    """Weights (and their derivatives) of 4-point Lagrange interpolation at offsets r ∈ [0, 3] (n × 4)."""
    r = np.asarray(r, float)
    w = np.stack([-(r - 1) * (r - 2) * (r - 3) / 6, r * (r - 2) * (r - 3) / 2,
                  -r * (r - 1) * (r - 3) / 2, r * (r - 1) * (r - 2) / 6], axis=1)
    dw = np.stack([-(3 * r * r - 12 * r + 11) / 6, (3 * r * r - 10 * r + 6) / 2,
                   -(3 * r * r - 8 * r + 3) / 2, (3 * r * r - 6 * r + 2) / 6], axis=1)
    return w, dw


def _weights(x, nodes):
    """4-point Lagrange weights and first stencil index on uniform ``nodes`` (NaN weights outside)."""
    h = nodes[1] - nodes[0]
    q = (np.asarray(x, float) - nodes[0]) / h
    i0 = np.clip(np.floor(q).astype(int) - 1, 0, nodes.size - 4)
    r = q - i0
    w, _ = _lagrange4(r)
    outside = ~((q >= -1e-9) & (q <= nodes.size - 1 + 1e-9))
    w[outside] = np.nan
    return w, i0


def _axis_weights(x, nodes, n):
    """Weights along a parameter axis: a single node (not drawn) or 4-point Lagrange."""
    if nodes.size == 1:
        return np.ones((n, 1)), np.zeros(n, int)
    x = np.broadcast_to(np.asarray(x, float), (n,))
    return _weights(x, nodes)


def _axis(values):
    """Nodes of log α or log s over the drawn values (one node if they are all the same)."""
    v = np.log(np.asarray(values, float))
    v = v[np.isfinite(v)]
    lo, hi = float(v.min()), float(v.max())
    if hi - lo < 1e-12:
        return np.array([lo])
    pad = 1e-6 * max(1.0, abs(lo))
    return np.linspace(lo - pad, hi + pad, PARAMETER_NODES)


def _forward(column, log_F, alpha, scale, integrate):
    """The integral model at (log F, α, s) arrays: dict of the emulated fields (NaN where escaped).

    ``integrate(column, F, alpha, scale)`` is the integral model's ensemble (handed in by
    ``ventflux.plume.inversion``, which uses this module: no import back).
    """
    F = np.exp(log_F)
    ens = integrate(column, F, alpha, scale)
    bad = ens.escaped | ~np.isfinite(ens.maximum_height)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = {"maximum": np.log(ens.maximum_height), "spreading": np.log(ens.spreading_height),
               "volume_flux": np.log(ens.spreading_volume_flux), "anomaly": ens.spreading_anomaly}
    return {k: np.where(bad, np.nan, v) for k, v in out.items()}


def _g_range(column, z, alpha, scale, level):
    """log G bounds covering every target rise for the extreme α and s (closed form, widened)."""
    f_lo, f_hi = _flux_range(column, z, np.full(1, REFERENCE_ENTRAINMENT), scale, level)
    # the closed form's coefficient is that of the default entrainment: G = F / α_default²
    return f_lo - 2.0 * np.log(REFERENCE_ENTRAINMENT) - 0.5, f_hi - 2.0 * np.log(REFERENCE_ENTRAINMENT) + 0.5


def _flux_range(column, z, alpha, scale, level):
    """log F bounds covering every target rise for the extreme α and s (closed form, widened)."""
    zmax = np.asarray(z, float) / (1.0 if level == "maximum" else closed_form.SPREADING_FRACTION)
    zmax = zmax[np.isfinite(zmax) & (zmax > 0)]
    lo_z, hi_z = float(zmax.min()), float(zmax.max())
    s_lo, s_hi = float(np.min(scale)), float(np.max(scale))
    F = []
    for zz, s in ((lo_z, s_lo), (hi_z, s_hi), (lo_z, s_hi), (hi_z, s_lo)):
        N = float(column.mean_n(zz)) * np.sqrt(s)
        F.append(closed_form._buoyancy_flux_point_source(zz, N))
    a_ratio = (float(np.max(alpha)) / float(np.min(alpha))) ** 2  # z ∝ α^(-1/2) F^(1/4): F ∝ α² at fixed z
    return np.log(min(F) / a_ratio) - 1.0, np.log(max(F) * a_ratio) + 1.0


def build(column, z, alpha, scale, level, integrate, rng=None, guide=False) -> ForwardEmulator | None:
    """An emulator covering the draws ``z`` (target rise, m), ``alpha`` and ``scale`` (arrays), or None.

    None when the measured interpolation error stays above ``TOLERANCE`` at
    ``MAX_F_NODES``, or stops shrinking as the grid is refined (the rise is
    then limited by the integrator's own step-to-step roughness, as for the
    spreading level), or when too few check points stay inside the column;
    the caller then integrates every draw. With ``guide`` such an emulator
    is returned all the same when its error is below ``GUIDE_TOLERANCE``,
    marked ``guide_only``: its answers then only start each draw's direct
    inversion (``ventflux.plume.inversion``), they are never results.
    """
    rng = np.random.default_rng(0) if rng is None else rng
    la_draws, ls = _axis(alpha), _axis(scale)
    la = np.array([0.5 * (la_draws[0] + la_draws[-1])])  # the grid's α: any one gives the same G-curves
    a_grid = float(np.exp(la[0]))
    g_lo, g_hi = _g_range(column, z, alpha, scale, level)
    nf = F_NODES
    previous = np.inf
    best = None
    while nf <= MAX_F_NODES:
        lg = np.linspace(g_lo, g_hi, nf)
        S, LG = np.meshgrid(ls, lg, indexing="ij")
        res = _forward(column, LG.ravel() + 2.0 * la[0], np.full(LG.size, a_grid), np.exp(S.ravel()), integrate)
        res["volume_flux"] = res["volume_flux"] - 2.0 * la[0]
        fields = {k: v.reshape((1,) + S.shape) for k, v in res.items()}
        fields["level"] = fields[level]
        emu = ForwardEmulator(level, lg, la, ls, fields, np.inf)
        # measured error at random points between the nodes (where the rise stays inside the column), each
        # integrated with its own α: the similarity's residue is measured with the interpolation's
        m = CHECK_POINTS
        cg = rng.uniform(lg[1], lg[-2], m)
        ca = (np.exp(rng.uniform(la_draws[0], la_draws[-1], m)) if la_draws.size > 1
              else np.full(m, np.exp(la_draws[0])))
        cs = np.exp(rng.uniform(ls[0], ls[-1], m)) if ls.size > 1 else np.full(m, np.exp(ls[0]))
        cf = cg + 2.0 * np.log(ca)
        direct = _forward(column, cf, ca, cs, integrate)[level]
        approx = emu.fields_at(("level",), cf, ca, cs)["level"]
        both = np.isfinite(direct) & np.isfinite(approx)
        if both.sum() < m // 2:
            return None
        emu.error = float(np.max(np.abs(np.log(approx[both]) - direct[both])))
        if emu.error <= TOLERANCE:
            return emu
        best = emu if best is None or emu.error < best.error else best
        if emu.error > 0.75 * previous:  # not shrinking with the grid: the integrator's own roughness
            break
        previous = emu.error
        nf = int(nf * REFINE)
    if guide and best is not None and best.error <= GUIDE_TOLERANCE:
        best.guide_only = True
        return best
    return None
