"""A survey figure written twice: PNG at print resolution for the results folder, SVG for the HTML report."""

from __future__ import annotations

import io

#: Resolution of the PNG figures in the results folder [dots per inch] (print quality; the report embeds SVG).
FIGURE_DPI = 200


def render_figure(fig) -> tuple[bytes, bytes]:
    """A matplotlib figure as (PNG at ``FIGURE_DPI``, SVG): the PNG for the folder, the SVG for the report.

    The SVG keeps its text as text (searchable, small) and carries no date, so a rerun writes the same bytes.
    """
    import matplotlib

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=FIGURE_DPI)
    svg = io.BytesIO()
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "ventflux"}):
        fig.savefig(svg, format="svg", metadata={"Date": None})
    return buf.getvalue(), svg.getvalue()


__all__ = ["FIGURE_DPI", "render_figure"]
