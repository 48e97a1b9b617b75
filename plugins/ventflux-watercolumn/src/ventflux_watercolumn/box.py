"""A closed box of sections: the net heat flux out of a volume around the source.

The net heat carried out of a box whose sides are vertical sections is

    H = Σ_sections ∫∫ ρ c_p0 ΔΘ u·n dA,

with ``n`` each side's *outward* normal. Around a steady source, heat that
enters through one side and leaves through another cancels, and H is what
the source adds (McDougall 2003 for ``c_p0 ΔΘ`` as heat content [1]).

Assembly
--------
1. Positions: geographic sections are put on one local frame about the
   mean of their origins (``reading.local_east_north``); a box may not mix
   geographic and local (east/north) sections.
2. Closure: the sections are walked in the order given; each one's ends are
   its end profiles (integration stops there, nothing is extrapolated). The
   gap between consecutive sections (and from the last back to the first)
   is the distance between the nearest ends. A gap wider than the tolerance
   is refused, naming the two sections and the gap. The default tolerance is
   the widest spacing between neighbouring profiles of any section (a
   choice: a corner no wider than the sections' own sampling), unless given.
3. Outward normals: each section's normal points away from the box's
   centre (the mean of the sections' ends).
4. Band: every section is integrated over one depth band: the given one, or
   the union of the bands of the sections in which a layer was detected.
   Sections the layer does not reach are integrated over it too: the heat
   that enters with the current counts as much as the heat that leaves.
5. Uncertainty: one propagation (``section.propagate_sections``): each
   section's own bootstrap over its profiles and background fit; the
   current, its direction, its accuracy and variability and the background
   window drawn once per draw and shared by every side.

References
----------
.. [1] McDougall, T. J. (2003). Potential enthalpy: a conservative oceanic
   variable for evaluating heat content and heat fluxes. J. Phys. Oceanogr.
   33, 945–963.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from ventflux.plugin_api import Collector, InputError

from .reading import local_east_north


@dataclass
class BoxAnalysis:
    """The nominal analyses of a box's sections, with how they close."""

    sections: list  # SectionAnalysis, in the order given
    names: list  # str, one per section (file names)
    gaps: list  # (name a, name b, gap m)
    tolerance: float  # m
    band: tuple  # (top, bottom) depth, m
    centre: np.ndarray  # (2,) m
    notes: list = field(default_factory=list)

    @property
    def outward_bearings(self) -> list:
        return [float(r.normal_bearing) for r in self.sections]


def common_frame(datas):
    """The sections on one local east/north frame (geographic ones about the mean of their origins)."""
    geo = [d.origin is not None for d in datas]
    if any(geo) and not all(geo):
        raise InputError("box", ", ".join(d.source for d, g in zip(datas, geo) if not g), "sections that all give "
                         "latitude/longitude, or all give east/north in one local frame")
    if not any(geo):
        return list(datas)
    lat0 = float(np.mean([d.origin[0] for d in datas]))
    lon0 = float(np.mean([d.origin[1] for d in datas]))
    out = []
    for d in datas:
        de, dn = local_east_north(d.origin[0], d.origin[1], lat0, lon0)
        out.append(replace(d, east=d.east + float(de), north=d.north + float(dn), origin=(lat0, lon0)))
    return out


def section_ends(res) -> np.ndarray:
    """Positions (2, 2) of a section's first and last profile along it, m: rows are ends, columns east/north."""
    i0, i1 = int(np.argmin(res.s)), int(np.argmax(res.s))
    return np.array([[res.profile_east[i0], res.profile_north[i0]], [res.profile_east[i1], res.profile_north[i1]]])


def closure_gaps(ends) -> list:
    """Gaps, m, between consecutive sections walked in order (the last back to the first).

    ``ends`` is a list of (2, 2) arrays (``section_ends``). Section 0 is tried both ways round; the walk with
    the smaller largest gap is kept. Returns ``[(i, j, gap), ...]``.
    """
    best = None
    for flip in (False, True):
        first = ends[0][::-1] if flip else ends[0]
        pos, gaps = first[1], []
        for j in range(1, len(ends)):
            d = np.hypot(*(ends[j] - pos).T)
            k = int(np.argmin(d))
            gaps.append((j - 1, j, float(d[k])))
            pos = ends[j][1 - k]
        gaps.append((len(ends) - 1, 0, float(np.hypot(*(first[0] - pos)))))
        if best is None or max(g for *_, g in gaps) < max(g for *_, g in best):
            best = gaps
    assert best is not None
    return best


def analyse_box(datas, names, analyse, tolerance=None, band=None) -> BoxAnalysis:
    """Nominal analysis of a closed box of sections.

    Parameters
    ----------
    datas : list of SectionData
        At least three sections, in order around the box.
    names : list of str
        How each section is named in messages and tables.
    analyse : callable
        ``analyse(data, band_depths=..., outward=...) -> SectionAnalysis`` (the section's own settings bound).
    tolerance : float, optional
        Largest gap, m, allowed between consecutive sections (default: see the module notes).
    band : (float, float), optional
        Top and bottom depth, m, of the integral (default: the union of the detected layers' bands).

    Raises
    ------
    InputError or InputErrors
        A box that does not close (every gap above the tolerance, named), fewer than three sections, or no
        band (no layer anywhere and none given).
    """
    if len(datas) < 3:
        raise InputError("box", f"{len(datas)} sections", "at least 3 sections around the box")
    datas = common_frame(datas)
    first = [analyse(d) for d in datas]
    ends = [section_ends(r) for r in first]
    spacing = max(float(np.max(np.diff(np.sort(r.s)))) if r.s.size > 1 else 0.0 for r in first)
    tol = spacing if tolerance is None else float(tolerance)
    gaps = [(names[i], names[j], g) for i, j, g in closure_gaps(ends)]
    errs = Collector()
    for a, b, g in gaps:
        if g > tol:
            errs.add(InputError("box", f"a gap of {g:.0f} m between {a} and {b}", "sections that close: gaps no "
                                f"wider than the closure tolerance {tol:.0f} m" + (" (the widest profile spacing)"
                                                                                  if tolerance is None else "")))
    errs.raise_if_any()
    if band is None:
        found = [r for r in first if r.found.any()]
        if not found:
            raise InputError("band", "(missing)", "the depths of the box's integral (no section shows a plume layer "
                             "above its threshold)")
        band = (min(float(r.edges[r.band[0]]) for r in found), max(float(r.edges[r.band[1] + 1]) for r in found))
    centre = np.mean(np.concatenate(ends), axis=0)
    sections = []
    for d, r in zip(datas, first):
        mid = np.array([np.mean(r.profile_east), np.mean(r.profile_north)])
        sections.append(analyse(d, band_depths=band, outward=mid - centre))
    # what the gaps leave out: their share of the box's perimeter (the sections' lengths along their profiles)
    walked = sum(float(np.hypot(np.diff(r.profile_east), np.diff(r.profile_north)).sum()) for r in first)
    gap_total = sum(g for _, _, g in gaps)
    share = gap_total / (walked + gap_total) if walked + gap_total > 0 else 0.0
    notes = [f"Box of {len(datas)} sections, integrated from {band[0]:g} to {band[1]:g} m; gaps between them "
             + ", ".join(f"{a}–{b} {g:.0f} m" for a, b, g in gaps) + f" (tolerance {tol:.0f} m). The heat "
             f"crossing the gaps ({share:.0%} of the box's perimeter) is not counted: nothing is extrapolated "
             "beyond a section's end profiles."]
    return BoxAnalysis(sections=sections, names=list(names), gaps=gaps, tolerance=tol, band=tuple(band),
                       centre=centre, notes=notes)
