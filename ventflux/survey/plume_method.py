"""Survey method ``[vent.plume_rise]``: a vent's heat power from the observed rise of its plume.

The stratification is the site's CTD cast (one cast for every vent: its
uncertainty, if given as a shared ``stratification_scale``, is drawn once per
draw for all of them) or a constant buoyancy frequency. The entrainment
coefficient is a model constant, the same for every plume of the field;
give it as a shared value (``"@entrainment"``) to carry its uncertainty
coherently. Left out, it is the uncertain constant ``ENTRAINMENT_UNCERTAIN``,
drawn once per draw for every plume under ``constants/entrainment coefficient``.

Propagation goes through ``ventflux.plume.propagation.plume_rise_propagation``
(the package's one driver), the same route as ``ventflux plume-rise --name``.
"""

from __future__ import annotations

from collections import OrderedDict

import numpy as np

from ..uncertainty import Uncertain
from ..units import Q_
from .api import MethodEstimate, ReportPart, SurveyMethod
from .fields import SharedRef, nominal_of
from .schema import SurveyKey

#: The top-hat entrainment coefficient as the literature gives it, a range: published Gaussian values of pure
#: plumes span about 0.08–0.12 (e.g. Morton, Taylor & Turner 1956: 0.093; Papanicolaou & List 1988: 0.105;
#: values from memory), ×√2 for top hat ≈ 0.11–0.17. Centred on the default (0.093√2 ≈ 0.1315) with a standard
#: deviation of 0.015 so that ±2 sd spans that range (a choice). Used when a plume gives no entrainment.
ENTRAINMENT_UNCERTAIN = Uncertain("normal", 0.093 * np.sqrt(2.0), 0.015, "dimensionless")
ENTRAINMENT_NAME = "constants/entrainment coefficient"


PLUME_RISE_KEYS = (
    SurveyKey("rise_height", "length", "observed rise of the plume above the vent (or a water-column section file a "
              "plugin reads, e.g. a tow-yo CSV)", required=True, uncertain=True, example='"180 ± 20 m"'),
    SurveyKey("level", "string", "what the height is: the plume's maximum rise or its spreading level",
              choices=("maximum", "spreading"), default='"maximum"', example='"maximum"'),
    SurveyKey("method", "string", "plume model inverted for the heat power: the integral model, or its "
              "closed-form constant-stratification limit", choices=("integral", "closed-form"),
              default='"integral"'),
    SurveyKey("entrainment", "dimensionless", "top-hat entrainment coefficient (a model constant: give it as "
              "\"@name\" of [shared] so every plume shares it)", uncertain=True,
              default=f"{ENTRAINMENT_UNCERTAIN} (the spread of published values)", example='"@entrainment"'),
    SurveyKey("current", "velocity", "ambient cross current (bends the plume; integral model)", uncertain=True),
    SurveyKey("buoyancy_frequency", "frequency", "a constant buoyancy frequency N instead of the site's CTD cast",
              required="unless [site] ctd is given", uncertain=True),
    SurveyKey("stratification_scale", "dimensionless", "factor on the stratification N² (its uncertainty, shared "
              "by every plume as \"@name\")", uncertain=True),
)


def _parse(f, ctx):
    from ..plume import DEFAULT_ENTRAINMENT, LEVELS, METHODS

    level = f.string("level", default="maximum", choices=LEVELS)
    spec = {
        "height": _height(f, ctx, level or "maximum"),
        "level": level,
        "method": f.string("method", default="integral", choices=METHODS),
        "entrainment": f.quantity("entrainment", "dimensionless", default=None, positive=True),
        "current": f.quantity("current", "velocity"),
        "buoyancy_frequency": f.quantity("buoyancy_frequency", "frequency", positive=True),
        "stratification_scale": f.quantity("stratification_scale", "dimensionless", positive=True),
    }
    if spec["entrainment"] is None and not f.has("entrainment"):
        f.defaults[f.key("entrainment")] = (f"{ENTRAINMENT_UNCERTAIN} (top-hat, about {DEFAULT_ENTRAINMENT:.4f}; "
                                            "Morton, Taylor & Turner 1956; the spread of published values)")
    site = ctx.site
    if site is not None and site.ctd is None and spec["buoyancy_frequency"] is None and not \
            f.has("buoyancy_frequency"):
        f.error("buoyancy_frequency", "(missing)", "a buoyancy frequency, or a CTD cast in [site] ctd")
    f.check_unknown()
    return spec


def _height(f, ctx, level):
    """The observed height: a length, or a water-column file read by a plugin's ``rise height`` reader."""
    from ..errors import InputError, InputErrors
    from ..registry import readers

    raw = f.raw("rise_height")
    found = {sfx: r for r in readers() if r.kind == "rise height" for sfx in r.suffixes}
    if not (isinstance(raw, str) and raw.strip().lower().endswith(tuple(found))):
        return f.quantity("rise_height", "length", required=True, positive=True)
    path = f.path_value("rise_height", required=True)
    if path is None:
        return None
    ctx.input_files[str(path)] = "water-column section (rise height)"
    try:
        return found[path.suffix.lower()].read(path, level=level, site=ctx.site)
    except InputErrors as e:
        f.errors.errors.extend(e.errors)
    except InputError as e:
        f.errors.add(e)
    return None


def propagation(spec, vent, ctx, track: bool = False, hand_over: bool = False):
    """The plume's Monte Carlo rise inversion as a survey run makes it (``PlumePropagation``).

    The run's estimate and ``--check`` call this one function with the run's context (``api.run_context``) and
    the run's draws: what ``--check`` accepts, the run then accepts, draw for draw. Raises the run's
    ``InputError`` when more draws than ``[run] max_unphysical`` have no plume solution.

    ``hand_over=True`` (the check) keeps the result for the run: the first call after it with the same inputs,
    draws and site (``_handover_key``) takes it, with the draws it registered, instead of solving again. It is
    taken once: a later call solves again.
    """
    key = _handover_key(spec, vent, ctx, track)
    kept = _HANDED_OVER.pop(key, None) if key is not None else None
    if kept is not None:
        pp, known, shared = kept
        ctx.draws.adopt(known, shared)  # the names this propagation draws, as drawing them would register them
        return pp
    before = set(ctx.draws._known), set(ctx.draws._shared)
    pp = _propagate(spec, vent, ctx, track)
    if hand_over and key is not None:
        _HANDED_OVER[key] = (pp, *ctx.draws.drawn_since(*before))
        while len(_HANDED_OVER) > 8:  # a survey's plumes; never more than a few results held
            _HANDED_OVER.popitem(last=False)
    return pp


_HANDED_OVER: OrderedDict = OrderedDict()


def _handover_key(spec, vent, ctx, track):
    """Everything the propagation's result depends on, or None (then nothing is handed over).

    The plume's parsed inputs (their text form), the vent's name, the draws (plain ``SharedDraws`` only: count
    and seed name every stream), the limit on dropped draws, the site's pressure, position and ambient values,
    and the CTD file (path, size, modification time, window, the cast chosen in it).
    """
    import os

    from ..uncertainty import SharedDraws

    pressure = getattr(ctx.pressure, "magnitude", None)
    if type(ctx.draws) is not SharedDraws or pressure is None or np.ndim(pressure) != 0:
        return None
    site = ctx.site
    ctd = None
    if site.ctd is not None:
        try:
            st = os.stat(site.ctd)
        except OSError:
            return None
        ctd = (str(site.ctd), st.st_size, st.st_mtime_ns, repr(site.ctd_window), repr(site.ctd_profile))
    ambient = (repr(site.ambient_temperature), repr(site.ambient_salinity))
    return (vent, bool(track), repr(sorted((k, repr(v)) for k, v in spec.items())), ctx.draws.n_draws,
            ctx.draws.seed, ctx.policy.max_share, float(ctx.pressure.to("Pa").magnitude), site.latitude,
            site.longitude, ambient, ctd)


def _propagate(spec, vent, ctx, track):
    from ..plume.propagation import plume_input_names, plume_rise_propagation

    names = plume_input_names(vent)
    inputs = {}
    for key in ("height", "entrainment", "current", "buoyancy_frequency", "stratification_scale"):
        v = spec.get(key)
        if isinstance(v, SharedRef):  # a [shared] input: one stream for all its users
            names[key], v = "shared/" + v.name, v.value
        inputs[key] = v
    if inputs["entrainment"] is None:  # a constant known only as a range: one draw per draw for every plume
        names["entrainment"], inputs["entrainment"] = ENTRAINMENT_NAME, ENTRAINMENT_UNCERTAIN
    site = ctx.site
    kwargs = dict(level=spec["level"], method=spec["method"], pressure=ctx.pressure, latitude=site.latitude,
                  longitude=site.longitude)
    if spec["buoyancy_frequency"] is not None:
        strat = None
        ambient = (nominal_of(site.ambient_temperature) if site.ambient_temperature is not None
                   else Q_(float(np.mean(ctx.ambient_temperature.to("K").magnitude)), "K"))
        kwargs.update(ambient_temperature=ambient, ambient_salinity=float(np.mean(ctx.ambient_salinity)))
    else:
        strat = ctx.stratification
        inputs.pop("buoyancy_frequency")
    return plume_rise_propagation(inputs, strat, draws=ctx.draws, names=names, vent=vent, max_unphysical=ctx.policy,
                                  track=track, **kwargs)


def _estimate(spec, vent, ctx):
    pp = propagation(spec, vent, ctx, track=spec["method"] == "integral")
    nominal = pp.result.nominal
    H = pp.heat_power.to("W").magnitude
    row = {"vent": vent, "observed_height [m]": float(nominal_of(spec["height"]).to("m").magnitude),
           "level": spec["level"], "model": spec["method"],
           "heat_power [MW]": float(nominal.heat_power.to("MW").magnitude),
           "buoyancy_flux [m^4/s^3]": float(nominal.buoyancy_flux.to("m^4/s^3").magnitude),
           "maximum_height [m]": float(nominal.rise_height.to("m").magnitude),
           "spreading_height [m]": float(nominal.spreading_height.to("m").magnitude),
           "spreading_volume_flux [m^3/s]": float(nominal.spreading_volume_flux.to("m^3/s").magnitude),
           "heat_power_p05 [MW]": float(np.nanpercentile(H, 5) / 1e6),
           "heat_power_p95 [MW]": float(np.nanpercentile(H, 95) / 1e6),
           "unphysical_draws": int(pp.unphysical)}
    figs = []
    if spec["method"] == "integral" and nominal.track is not None:
        from ..plume.figures import plume_figure

        figs.append(("plume_rise", plume_figure(nominal),
                     f"{vent}: the nominal plume's radius and speed beside the stratification it rises through."))
    return MethodEstimate(heat_power=Q_(H, "W"), nominal_heat_power=nominal.heat_power.to("W"), rows=[row],
                          figures=figs,
                          notes=["Plume rise: a pure plume of the vent's heat power rising through the site's "
                                 "stratification (top-hat integral model, TEOS-10 densities)."])


PLUME_RISE = SurveyMethod(key="plume_rise", summary="observed rise height of the vent's plume in the site's "
                                                   "stratification (integral plume model, inverted)",
                          parse=_parse, estimate=_estimate, keys=PLUME_RISE_KEYS,
                          report=ReportPart(titles={"plume_rise": "Plume rise of each vent"}, rank=21))
