"""Figures for the datasheet and the reports: matplotlib without a screen, PNG embedded as base64 so
that one HTML or Markdown file travels alone."""
from __future__ import annotations

import base64
import io


def pyplot():
    """matplotlib's pyplot on the Agg backend (no screen needed)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def plain_ticks(fig) -> None:
    """Tick labels that read as values: no additive offset ("+1.234e3" beside the axis, which
    makes a flat resistance unreadable); a power of ten, where one is needed, written as x10^n."""
    from matplotlib.ticker import ScalarFormatter

    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            fmt = axis.get_major_formatter()
            if isinstance(fmt, ScalarFormatter):  # log axes keep their own formatter
                fmt.set_useOffset(False)
                fmt.set_useMathText(True)


def png_base64(fig) -> str:
    plain_ticks(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=90, bbox_inches="tight")
    pyplot().close(fig)
    return base64.b64encode(buf.getvalue()).decode()


def style_pair(ax, axd, ylabel: str, xlabel: str, diff_label: str) -> None:
    """Labels, grid and legend of a quantity panel above its difference panel."""
    ax.set_ylabel(ylabel)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    axd.set_ylabel(diff_label)
    axd.set_xlabel(xlabel)
    axd.grid(alpha=0.3)
