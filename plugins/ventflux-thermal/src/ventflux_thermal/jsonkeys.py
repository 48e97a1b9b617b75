"""JSON keys in SI units (the vocabulary's rule), with the plugin's earlier keys kept for one release.

The thermal commands' results are built with the units people read them in
(mW/m², mK, hours, m/yr); their JSON carries SI units in its keys, as every
ventflux JSON does: ``heat_flow_W_m2``, ``residual_K``,
``dominant_periods_s``, ``discharge_m_s``. The earlier keys stay beside
them until ventflux 0.4, and the command prints one deprecation line.
"""

from __future__ import annotations

from ventflux.plugin_api import warn_deprecated

#: Suffix of an earlier key → (SI suffix, factor to SI).
SI_SUFFIXES = {"_mW_m2": ("_W_m2", 1e-3), "_mK": ("_K", 1e-3), "_h": ("_s", 3600.0), "_m_yr": ("_m_s", None)}


def _factor(suffix):
    new, f = SI_SUFFIXES[suffix]
    if f is None:  # a year: the advection fit's own (imported here: the module loads scipy)
        from .advection import SECONDS_PER_YEAR

        f = 1.0 / SECONDS_PER_YEAR
    return new, f


def _convert(value, f):
    if isinstance(value, dict):
        return {k: _convert(v, f) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_convert(v, f) for v in value]
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return value * f
    return value


def si_json(d, renamed: set[tuple[str, str]] | None = None):
    """``d`` with every key in non-SI units also given in SI (the earlier key kept); ``renamed`` collects them."""
    if isinstance(d, list):
        return [si_json(v, renamed) for v in d]
    if not isinstance(d, dict):
        return d
    out = {}
    for k, v in d.items():
        suffix = next((s for s in SI_SUFFIXES if isinstance(k, str) and k.endswith(s)), None)
        if suffix is None:
            out[k] = si_json(v, renamed)
            continue
        new, f = _factor(suffix)
        si_key = k[: -len(suffix)] + new
        out[si_key] = _convert(v, f)
        out[k] = v
        if renamed is not None:
            renamed.add((k, si_key))
    return out


def print_deprecation(renamed: set[tuple[str, str]], command: str) -> None:
    """One line naming the earlier keys and their SI names (nothing when there were none)."""
    if renamed:
        pairs = sorted(renamed)
        warn_deprecated(", ".join(o for o, _ in pairs[:3]) + (", ..." if len(pairs) > 3 else ""),
                        ", ".join(n for _, n in pairs[:3]) + (", ..." if len(pairs) > 3 else ""),
                        f"{command} --json keys")
