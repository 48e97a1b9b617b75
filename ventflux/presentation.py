"""How results present themselves: a short ``repr``, HTML for notebooks, pandas and xarray.

Every result class (an orifice's discharge, a plume's rise, diffuse patches,
a reservoir, a summarizer's answer, a whole survey) inherits ``Presentable``
and gets, from this one module:

* ``repr(result)``: one line per output, the median and the 5–95 % interval
  of the Monte Carlo draws with units (never the draws themselves);
* ``_repr_html_()``: the same as an HTML table, which Jupyter shows;
* ``to_dataframe()``: one row per output (and per vent, patch or orifice)
  with ``unit``, ``nominal``, ``p05``, ``p50``, ``p95``, ``mean`` and ``sd``;
  ``to_dataframe(draws=True)``: one row per draw, one column per output
  with its unit in the column name (``heat_power [MW]``);
* ``to_xarray()``: an ``xarray.Dataset`` with the draws along a ``draw``
  dimension, ``units`` and ``long_name`` attributes on every variable and a
  CF ``standard_name`` where the CF table has one; the nominal result (every
  input at its central value) in variables named ``<output>_nominal``.

What each class shows is described here, by the class's name, in
``_ADAPTERS`` (the result modules stay free of presentation code). Statistics
ignore draws that could not be evaluated (NaN), which the results count
elsewhere.
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field

import numpy as np

#: Unit an output is shown in (repr, HTML, data frames) when stored in the key's unit.
_DISPLAY_UNIT = {"W": "MW", "J": "PJ", "W/m^2": "W/m^2"}
#: CF standard names of the outputs that have one (CF standard name table; names checked by hand).
STANDARD_NAMES = {
    "ambient_density": "sea_water_density",
    "density": "sea_water_density",
    # a water column (``AmbientProfile``); sea pressure as CTD files store it (see ``ventflux.ctd_formats``)
    "depth": "depth",
    "sea_pressure": "sea_water_pressure",
    "temperature": "sea_water_temperature",
    "practical_salinity": "sea_water_practical_salinity",
    "absolute_salinity": "sea_water_absolute_salinity",
    "conservative_temperature": "sea_water_conservative_temperature",
    "potential_density": "sea_water_potential_density",
    "buoyancy_frequency_squared": "square_of_brunt_vaisala_frequency_in_sea_water",
}
#: The vocabulary's names where a result's attribute name differs (``ventflux.vocabulary``).
_VOCABULARY = {"pressure": "absolute_pressure"}
#: Largest number of elements (vents, patches, orifices) listed one by one in a repr.
_MAX_LISTED = 6
#: Largest number of outputs in a repr (the rest: ``to_dataframe()``).
_MAX_OUTPUTS = 10


@dataclass
class Variable:
    """One output: magnitudes in ``unit`` with named dimensions (the last may be ``draw``)."""

    name: str
    values: np.ndarray
    unit: str
    dims: tuple = ()
    nominal: np.ndarray | None = None  # the nominal result, shaped like ``values`` without ``draw``
    stats: dict | None = None  # given statistics (p05, p50, p95, mean, sd) when no draws are kept
    long_name: str = ""

    @property
    def has_draws(self) -> bool:
        return bool(self.dims) and self.dims[-1] == "draw"


@dataclass
class Presented:
    """What a result shows: a title, its variables, labels of its element dimensions and attributes."""

    title: str
    variables: list
    coords: dict = field(default_factory=dict)  # dimension -> labels
    attrs: dict = field(default_factory=dict)
    labels: dict = field(default_factory=dict)  # further coordinate -> (its dimension, one label per element)
    coord_attrs: dict = field(default_factory=dict)  # dimension -> attributes of its (numeric) coordinate


# --------------------------------------------------------------------------- the mixin
class Presentable:
    """Mixin giving a result ``__repr__``, ``_repr_html_``, ``to_dataframe`` and ``to_xarray``."""

    def _presented(self) -> Presented:
        return _ADAPTERS[type(self).__name__](self)

    def __repr__(self) -> str:
        return text_of(self._presented())

    def _repr_html_(self) -> str:
        return html_of(self._presented())

    def to_dataframe(self, draws: bool = False):
        """The result as a pandas DataFrame.

        Parameters
        ----------
        draws : bool
            False (default): one row per output (and element) with its
            ``unit``, ``nominal`` value, ``p05``, ``p50``, ``p95``, ``mean``
            and ``sd`` of the draws. True: one row per Monte Carlo draw, one
            column per output and element, unit in the column name.

        Returns
        -------
        pandas.DataFrame
        """
        p = self._presented()
        return draws_frame(p) if draws else summary_frame(p)

    def to_xarray(self):
        """The result as an ``xarray.Dataset`` (draws along ``draw``; units in attributes).

        Returns
        -------
        xarray.Dataset
        """
        return dataset_of(self._presented())


# --------------------------------------------------------------------------- statistics and text
def _stats(v: Variable) -> dict:
    """Per element: p05, p50, p95, mean, sd (NaN draws ignored); the value itself without draws."""
    if v.stats is not None:
        return v.stats
    x = np.asarray(v.values, float)
    if not v.has_draws:
        return {"p50": x}
    with np.errstate(all="ignore"), _quiet():
        p05, p50, p95 = np.nanpercentile(x, [5, 50, 95], axis=-1)
        n = np.sum(np.isfinite(x), axis=-1)
        sd = np.where(n > 1, np.nanstd(x, axis=-1, ddof=1) if x.shape[-1] > 1 else np.nan, np.nan)
        return {"p05": p05, "p50": p50, "p95": p95, "mean": np.nanmean(x, axis=-1), "sd": sd}


class _quiet:
    def __enter__(self):
        import warnings

        self._w = warnings.catch_warnings()
        self._w.__enter__()
        warnings.simplefilter("ignore", RuntimeWarning)

    def __exit__(self, *exc):
        self._w.__exit__(*exc)


def _spread(s: dict) -> bool:
    """Whether an element's draws spread at all (an input held exact gives the same value in every draw)."""
    if "p05" not in s:
        return False
    lo, hi = float(s["p05"]), float(s["p95"])
    return bool(np.isfinite(lo) and np.isfinite(hi) and not np.isclose(lo, hi, rtol=1e-12, atol=0.0))


def _display(v: Variable):
    """(factor, unit) to show ``v`` in."""
    unit = _DISPLAY_UNIT.get(v.unit)
    if unit is None or unit == v.unit:
        return 1.0, v.unit
    from .units import Q_

    return float(Q_(1.0, v.unit).to(unit).magnitude), unit


def _fmt(x) -> str:
    x = float(x)
    if not np.isfinite(x):
        return "nan"
    return f"{x:.4g}"


def _unit_text(unit: str) -> str:
    return "" if unit in ("1", "") else f" {unit}"


def _element_rows(p: Presented, v: Variable):
    """(label, stats of one element) for each element of ``v`` (one row without element dimensions).

    The label is a tuple of the element's coordinate values, one per element dimension (empty without any).
    """
    st = _stats(v)
    element_dims = [d for d in v.dims if d != "draw"]
    if not element_dims:
        yield (), {k: np.asarray(a).reshape(()) for k, a in st.items()}
        return
    shape = np.shape(st["p50"])
    for idx in np.ndindex(*shape):
        labels = tuple(_label(p.coords.get(d, range(n))[i]) for d, n, i in zip(element_dims, shape, idx))
        yield labels, {k: np.asarray(a)[idx] for k, a in st.items()}


def _label(x):
    """A coordinate value as shown: numbers stay numbers (a depth), names become text."""
    return float(x) if isinstance(x, (float, np.floating)) else int(x) if isinstance(x, (int, np.integer)) else str(x)


def _joined(label) -> str:
    return ", ".join(f"{x:g}" if isinstance(x, float) else str(x) for x in label)


def text_of(p: Presented) -> str:
    """The short readable text of a result: median and 5–95 % with units."""
    lines = [p.title]
    width = min(max((len(v.name) for v in p.variables), default=0), 28) + 2
    for v in p.variables[:_MAX_OUTPUTS]:
        f, unit = _display(v)
        rows = list(_element_rows(p, v))
        if len(rows) > _MAX_LISTED:
            med = np.array([r[1]["p50"] for r in rows], float) * f
            what = "medians" if v.has_draws or v.stats is not None else "values"
            lines.append(f"  {v.name:<{width}}{len(rows)} {what} from {_fmt(np.nanmin(med))} to "
                         f"{_fmt(np.nanmax(med))}{_unit_text(unit)}")
            continue
        for label, s in rows:
            name = f"{v.name}[{_joined(label)}]" if label else v.name
            shown = f"{_fmt(s['p50'] * f)}{_unit_text(unit)}"
            if _spread(s):
                shown += f"  (5–95 %: {_fmt(s['p05'] * f)} to {_fmt(s['p95'] * f)})"
            lines.append(f"  {name:<{width}} {shown}" if len(name) >= width else f"  {name:<{width}}{shown}")
    if len(p.variables) > _MAX_OUTPUTS:
        lines.append(f"  ... {len(p.variables) - _MAX_OUTPUTS} more outputs: .to_dataframe()")
    return "\n".join(lines)


def html_of(p: Presented) -> str:
    """The result as an HTML table for notebooks (median, 5 % and 95 % with units)."""
    e = html.escape
    uncertain = any(v.has_draws or (v.stats is not None and "p05" in v.stats) for v in p.variables)
    head = "<th>output</th><th>median</th><th>5 %</th><th>95 %</th><th>unit</th>" if uncertain else \
        "<th>output</th><th>value</th><th>unit</th>"
    body = []
    for v in p.variables:
        f, unit = _display(v)
        for label, s in _element_rows(p, v):
            name = f"{v.name} [{_joined(label)}]" if label else v.name
            cells = [_fmt(s["p50"] * f)]
            if uncertain:
                cells += [_fmt(s["p05"] * f), _fmt(s["p95"] * f)] if _spread(s) else ["", ""]
            body.append("<tr><td>" + e(name) + "</td>" + "".join(f"<td>{c}</td>" for c in cells)
                        + f"<td>{e(unit)}</td></tr>")
    return (f"<div class='ventflux-result'><b>{e(p.title)}</b><table><thead><tr>{head}</tr></thead>"
            f"<tbody>{''.join(body)}</tbody></table></div>")


# --------------------------------------------------------------------------- pandas and xarray
def summary_frame(p: Presented):
    """One row per output and element: unit, nominal, p05, p50, p95, mean, sd."""
    import pandas as pd

    rows = []
    element_dims = sorted({d for v in p.variables for d in v.dims if d != "draw"}, key=str)
    for v in p.variables:
        nominal_rows = None
        if v.nominal is not None:
            nominal_rows = [s["p50"] for _, s in _element_rows(p, Variable(v.name, np.asarray(v.nominal, float),
                                                                             v.unit, v.dims[:-1] if v.has_draws
                                                                             else v.dims))]
        mine = [d for d in v.dims if d != "draw"]
        for i, (label, s) in enumerate(_element_rows(p, v)):
            row = {"quantity": v.name}
            parts = list(label)
            for d in element_dims:
                row[d] = parts[mine.index(d)] if d in mine else None
            row["unit"] = v.unit
            row["nominal"] = float(nominal_rows[i]) if nominal_rows is not None else \
                (float(s["p50"]) if "p05" not in s else np.nan)
            for k in ("p05", "p50", "p95", "mean", "sd"):
                row[k] = float(s[k]) if k in s else np.nan
            rows.append(row)
    return pd.DataFrame(rows, columns=["quantity", *element_dims, "unit", "nominal", "p05", "p50", "p95", "mean",
                                       "sd"])


def draws_frame(p: Presented):
    """One row per draw, one column per output (and element), unit in the column name."""
    import pandas as pd

    cols = {}
    for v in p.variables:
        if not v.has_draws:
            continue
        x = np.asarray(v.values, float)
        element_dims = v.dims[:-1]
        for idx in np.ndindex(*x.shape[:-1]):
            prefix = "/".join(str(_label(p.coords.get(d, range(n))[i])) for d, n, i in zip(element_dims,
                                                                                          x.shape[:-1], idx))
            cols[f"{prefix + '/' if prefix else ''}{v.name} [{v.unit}]"] = x[idx]
    if not cols:
        from .errors import InputError

        raise InputError("draws", "True", "a result with Monte Carlo draws (this one has none)")
    frame = pd.DataFrame(cols)
    frame.index.name = "draw"
    return frame


def dataset_of(p: Presented):
    """An ``xarray.Dataset``: every output with its dimensions, draws along ``draw``, units in attributes."""
    import xarray as xr

    data = {}
    coords: dict = {}
    for v in p.variables:
        attrs = {"units": _cf_unit(v.unit), "long_name": v.long_name or v.name.replace("_", " ")}
        if v.name in STANDARD_NAMES:
            attrs["standard_name"] = STANDARD_NAMES[v.name]
        values = np.asarray(v.values, float)
        if v.stats is not None and not v.has_draws:  # only the statistics of the draws were kept
            values = np.asarray(v.stats["p50"], float)
            attrs["statistic"] = "median of the Monte Carlo draws"
            for k in ("p05", "p95"):
                if k in v.stats:
                    data[f"{v.name}_{k}"] = xr.DataArray(np.asarray(v.stats[k], float), dims=v.dims, attrs={
                        **attrs, "statistic": f"{k[1:]}th percentile of the Monte Carlo draws"})
        data[v.name] = xr.DataArray(values, dims=v.dims, attrs=attrs)
        if v.nominal is not None and v.has_draws:
            data[f"{v.name}_nominal"] = xr.DataArray(np.asarray(v.nominal, float), dims=v.dims[:-1],
                                                     attrs={**attrs, "long_name": attrs["long_name"]
                                                            + " (every input at its central value)"})
        for d, n in zip(v.dims, values.shape):
            if d == "draw":
                coords.setdefault("draw", np.arange(n))
            elif d in p.coords and d not in coords:
                labels = np.asarray(p.coords[d])
                coords[d] = xr.Variable(d, labels if labels.dtype.kind in "fiu" else
                                        np.asarray([str(x) for x in labels], dtype=object), p.coord_attrs.get(d, {}))
    for name, (dim, values) in p.labels.items():
        if dim in coords:
            coords[name] = (dim, np.asarray([str(x) for x in values], dtype=object))
    ds = xr.Dataset(data, coords=coords)
    ds.attrs.update({"title": p.title, "source": "ventflux", **{k: v for k, v in p.attrs.items() if v is not None}})
    return ds


def _cf_unit(unit: str) -> str:
    """A unit string UDUNITS reads (``m^3/s`` → ``m3 s-1``; dimensionless → ``1``)."""
    if unit in ("", "dimensionless", "1"):
        return "1"
    return unit.replace("^", "")


# --------------------------------------------------------------------------- what each result shows
def _mag(q, unit):
    return np.asarray(q.to(unit).magnitude, float)


def _outputs(obj, outputs, dims_of, nominal=None):
    out = []
    for attr, unit, name in outputs:
        q = getattr(obj, attr, None)
        if q is None or not hasattr(q, "to"):
            continue
        values = _mag(q, unit)
        nom = None
        if nominal is not None and getattr(nominal, attr, None) is not None:
            nom = _mag(getattr(nominal, attr), unit)
        out.append(Variable(_VOCABULARY.get(name, name), values, "1" if unit == "dimensionless" else unit,
                            dims_of(values.ndim), nom))
    return out


def _plain_dims(element):
    return lambda ndim: tuple([element] + [f"{element}_{i}" for i in range(1, ndim)])[:ndim]


def _drawn_dims(element):
    return lambda ndim: tuple([element] + [f"{element}_{i}" for i in range(1, ndim - 1)])[:ndim - 1] + ("draw",) \
        if ndim else ()


def _orifice(r) -> Presented:
    return Presented(type(r).__name__, _outputs(r, type(r).OUTPUTS, _plain_dims("orifice")))


def _orifice_uncertain(r) -> Presented:
    outputs = type(r.nominal).OUTPUTS
    head = f"{type(r).__name__} ({r.n_draws} draws kept, {r.rejected} dropped as unphysical; seed {r.seed})"
    return Presented(head, _outputs(r.draws, outputs, _drawn_dims("orifice"), r.nominal),
                     attrs={"seed": r.seed, "unphysical_draws": r.rejected})


_DIFFUSE = (("heat_power", "W", "heat_power"), ("heat_power_cp_shortcut", "W", "heat_power_constant_cp"),
            ("volume_flux", "m^3/s", "volume_flux"), ("mass_flux", "kg/s", "mass_flux"), ("area", "m^2", "area"),
            ("effective_area", "m^2", "effective_area"), ("specific_heat_content", "J/kg", "specific_heat_content"),
            ("density", "kg/m^3", "density"))


def _diffuse(r) -> Presented:
    ndim = np.ndim(r.heat_power.magnitude)
    dims = (lambda n: ("patch", "draw")[:n]) if ndim == 2 else _plain_dims("patch")
    return Presented(type(r).__name__, _outputs(r, _DIFFUSE, dims))


def _diffuse_propagation(r) -> Presented:
    head = f"{type(r).__name__} ({r.n_draws} draws, {r.unphysical} dropped as unphysical; seed {r.seed})"
    return Presented(head, _outputs(r.draws, _DIFFUSE, lambda n: ("patch", "draw")[-n:] if n else (), r.nominal),
                     attrs={"seed": r.seed, "unphysical_draws": r.unphysical})


_PLUME = (("heat_power", "W", "heat_power"), ("buoyancy_flux", "m^4/s^3", "buoyancy_flux"),
          ("rise_height", "m", "rise_height"), ("spreading_height", "m", "spreading_height"),
          ("downstream_distance", "m", "downstream_distance"),
          ("spreading_volume_flux", "m^3/s", "spreading_volume_flux"),
          ("spreading_dilution", "dimensionless", "spreading_dilution"),
          ("spreading_anomaly", "delta_degC", "spreading_anomaly"))


def _plume(r) -> Presented:
    drawn = r.draws is not None and np.ndim(r.heat_power.magnitude) >= 1
    head = f"{type(r).__name__} ({r.method}, {r.level} level"
    head += f"; {r.draws} draws, {r.failed} failed; seed {r.seed})" if drawn else ")"
    dims = (lambda n: ("draw",) if n else ()) if drawn else _plain_dims("element")
    variables = _outputs(r, _PLUME, dims, r.nominal if drawn else None)
    for v in variables:
        if v.unit == "delta_degC":
            v.unit = "K"  # a conservative-temperature difference
    return Presented(head, variables, attrs={"method": r.method, "level": r.level, "seed": r.seed,
                                             "failed_draws": r.failed if drawn else None})


_HEAT = (("total", "J", "stored_heat"), ("rock", "J", "rock_heat"), ("pore_fluid", "J", "pore_fluid_heat"),
         ("latent", "J", "latent_heat"), ("volume", "m^3", "volume"), ("area", "m^2", "area"),
         ("thickness", "m", "thickness"))
_LIFETIME = (("mining_time", "year", "heat_mining_time"), ("decline_time", "year", "decline_time"),
             ("conductive_time", "year", "conductive_time"), ("size", "m", "conductive_length"))


def _reservoir_heat(r) -> Presented:
    return Presented(type(r).__name__, _outputs(r, _HEAT, _plain_dims("element")),
                     attrs={"pore_fluid_phase": r.pore_fluid_phase or None})


def _lifetime(r) -> Presented:
    variables = _outputs(r, _LIFETIME, _plain_dims("element")) + _outputs(r.heat, _HEAT[:1], _plain_dims("element"))
    controlling = np.asarray(r.controlling).reshape(-1)
    attrs = {"controlling": str(controlling[0]) if controlling.size == 1 else None,
             "spent_fraction": r.spent_fraction, "size_basis": r.size_basis or None}
    return Presented(type(r).__name__, variables, attrs=attrs)


def _answer(r) -> Presented:
    variables = []
    for name, (s, unit) in r.outputs.items():
        u = "1" if unit in ("", "dimensionless") else unit
        sample = r.samples.get(name) if r.samples else None
        if r.draws > 1 and sample is not None and np.ndim(sample.magnitude) == 1:
            variables.append(Variable(name, _mag(sample, unit), u, ("draw",)))
        elif r.draws > 1:
            s = s.to(unit)
            variables.append(Variable(name, np.asarray(float(s.median.magnitude)), u, (), stats={
                k: float(getattr(s, a).magnitude) for k, a in (("p05", "p05"), ("p50", "median"), ("p95", "p95"),
                                                               ("mean", "mean"), ("sd", "std"))}))
        else:
            variables.append(Variable(name, np.asarray(float(s.median.to(unit).magnitude)), u, ()))
    head = f"{type(r).__name__}: {r.question}"
    if r.draws > 1:
        head += f" ({r.draws} draws, {r.dropped} dropped as unphysical; seed {r.seed})"
    labels = {k: str(v) for k, v in r.labels.items() if np.ndim(v) == 0}
    return Presented(head, variables, attrs={**labels, "seed": r.seed})


def _summary_variable(name, s, unit):
    s = s.to(unit)
    return Variable(name, np.asarray(float(s.median.magnitude)), unit, (), stats={
        "p05": float(s.p05.magnitude), "p50": float(s.median.magnitude), "p95": float(s.p95.magnitude),
        "mean": float(s.mean.magnitude), "sd": float(s.std.magnitude)})


def _survey(r) -> Presented:
    variables = []
    coords: dict = {}
    parts = []
    for part in ("focused", "diffuse", "conductive"):
        t = getattr(r, part)
        if t is not None:
            d = _mag(t.draws, "MW").reshape(-1)
            parts.append(d)
            variables.append(Variable(f"{part}_heat_power", d, "MW", ("draw",),
                                      long_name=f"{part} heat power of the field"))
    if parts:
        variables.insert(0, Variable("total_heat_power", np.sum(np.broadcast_arrays(*parts), axis=0), "MW",
                                     ("draw",), long_name="total heat power of the field"))
    vents = [vr for vr in r.vents if vr.heat_power is not None]
    if vents:
        coords["vent"] = [vr.name for vr in vents]
        variables.append(Variable("vent_heat_power", np.stack([_mag(vr.heat_power, "MW").reshape(-1)
                                                               for vr in vents]), "MW", ("vent", "draw"),
                                  long_name="heat power of each focused vent (methods combined)"))
    keep = np.asarray(r.keep, bool) if r.keep is not None else None
    labels: dict = {}
    items, rows, kinds = [], [], []
    for key, s in r.sections.items():
        h = np.atleast_2d(_mag(s.heat_power, "MW"))
        if keep is not None and h.shape[-1] == keep.size:
            h = h[:, keep]
        for name, row in zip(s.names, h):
            items.append(f"{key}/{name}")
            rows.append(row)
            kinds.append(s.category)
    if rows and len({len(x) for x in rows}) == 1:
        coords["item"] = items
        labels = {"category": ("item", kinds)}  # focused, diffuse, conductive, or a check / context
        variables.append(Variable("item_heat_power", np.stack(rows), "MW", ("item", "draw"),
                                  long_name="heat power of each item of the field-wide sections"))
    for name, s in r.water.items():
        variables.append(_summary_variable(name, s, _water_unit(name)))
    if r.reservoirs:
        coords["reservoir"] = [res["name"] for res in r.reservoirs]
        for key, label in (("mining", "heat_mining_time"), ("decline", "decline_time")):
            each = [_summary_variable(label, res[key], "year").stats for res in r.reservoirs]
            stats = {k: np.array([e[k] for e in each]) for k in each[0]}
            variables.append(Variable(f"reservoir_{label}", stats["p50"], "year", ("reservoir",), stats=stats,
                                      long_name=f"{label.replace('_', ' ')} of each reservoir hypothesis"))
    head = (f"{type(r).__name__}: {getattr(getattr(r.spec, 'path', None), 'name', '')} ({r.n_draws} draws kept, "
            f"{r.dropped_draws} dropped; seed {r.spec.seed})")
    return Presented(head, variables, coords=coords, labels=labels,
                     attrs={"seed": r.spec.seed, "dropped_draws": r.dropped_draws,
                            "survey_file": str(getattr(r.spec, "path", ""))})


def _water_unit(name):
    return "kg/s" if "mass" in name else "m^3/s"


_PROFILE = (("sea_pressure", "dbar", "sea_pressure"), ("temperature", "degC", "temperature"),
            ("practical_salinity", "dimensionless", "practical_salinity"),
            ("absolute_salinity", "g/kg", "absolute_salinity"),
            ("conservative_temperature", "degC", "conservative_temperature"),
            ("potential_density", "kg/m^3", "potential_density"))


def _ambient_profile(r) -> Presented:
    variables = _outputs(r, _PROFILE, lambda n: ("depth",) if n else ())
    n2 = Variable("buoyancy_frequency_squared", _mag(r.buoyancy_frequency_squared, "1/s^2"), "1/s^2", ("n2_depth",),
                  long_name="squared buoyancy frequency N² between the levels")
    where = ", ".join(f"{k} {v:g}°" for k, v in (("latitude", r.latitude), ("longitude", r.longitude))
                      if v is not None)
    window = f"{r.window:~P} bins" if r.window is not None else "every row"
    head = (f"{type(r).__name__}: {r.source} ({np.size(r.depth.magnitude)} levels, {window}"
            f"{'; ' + where if where else ''})")
    depth_attrs = {"standard_name": "depth", "units": "m", "positive": "down",
                   "long_name": "depth below the sea surface"}
    return Presented(head, [*variables, n2],
                     coords={"depth": _mag(r.depth, "m"), "n2_depth": _mag(r.n2_depth, "m")},
                     # n2_depth carries no standard_name, so that a reader finds one depth (the levels')
                     coord_attrs={"depth": depth_attrs,
                                  "n2_depth": {"units": "m", "positive": "down",
                                               "long_name": "depth of the N² values (midpoints between levels)"}},
                     attrs={"source": r.source, "latitude": r.latitude, "longitude": r.longitude})


#: Result class name → what it shows.
_ADAPTERS = {
    "OrificeDischarge": _orifice,
    "UncertainDischarge": _orifice_uncertain,
    "DiffuseDischarge": _diffuse,
    "DiffusePropagation": _diffuse_propagation,
    "PlumeRiseResult": _plume,
    "ReservoirHeat": _reservoir_heat,
    "Lifetime": _lifetime,
    "Answer": _answer,
    "SurveyResult": _survey,
    "AmbientProfile": _ambient_profile,
}
