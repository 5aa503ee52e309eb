"""The force-plate view: COM height and ground force against frames, phases shaded.

matplotlib is an optional extra (``pip install leapwright[charts]``); it is
imported only when a chart is asked for.
"""

import os

from leapwright.core.base.errors import LeapwrightError

_PHASE_COLOURS = {
    "weighing": "#d9d9d9",
    "unweighting": "#9ecae1",
    "braking": "#fdae6b",
    "propulsion": "#e6550d",
    "flight": "#a1d99b",
    "landing": "#bcbddc",
}


def _pyplot():
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        raise LeapwrightError("charts need matplotlib: pip install 'leapwright[charts]'") from None
    return plt


def force_plate_chart(path, frames, height_m, force_bw, spans, title="", x_label="frame",
                      force_label="ground force [BW]"):
    """Write a PNG with COM height [m] above and force [BW] below, against frames.

    Parameters
    ----------
    path : str
        Output PNG path.
    frames, height_m, force_bw : array_like
        Samples; frames may be fractional.
    spans : list of (first_frame, last_frame, label)
        Regions to shade; labels named after a force-plate phase get its colour.
    title : str
    x_label : str
        Label of the horizontal axis (a force-plate trace is drawn against seconds).
    force_label : str
        The force axis' label: a plan's curve is the ground force; a checked path's is its
        apparent weight m(g + a), which is the ground force only where the feet are down.
    """
    plt = _pyplot()
    fig, (ax_h, ax_f) = plt.subplots(2, 1, sharex=True, figsize=(8, 5), dpi=100,
                                     gridspec_kw={"height_ratios": [1, 1]})
    seen = set()
    for first, last, label in spans:
        colour = _PHASE_COLOURS.get(label, "#c7e9c0")
        for ax in (ax_h, ax_f):
            ax.axvspan(first, last, color=colour, alpha=0.55, lw=0,
                       label=label if (ax is ax_f and label not in seen) else None)
        seen.add(label)
    ax_h.plot(frames, height_m, color="#08306b", lw=1.8)
    ax_h.set_ylabel("COM height [m]")
    ax_f.plot(frames, force_bw, color="#67000d", lw=1.8)
    ax_f.axhline(1.0, color="k", lw=0.8, ls="--")
    ax_f.set_ylabel(force_label)
    ax_f.set_xlabel(x_label)
    ax_f.legend(loc="upper right", fontsize=7, ncol=3, frameon=False)
    if title:
        ax_h.set_title(title)
    for ax in (ax_h, ax_f):
        ax.grid(alpha=0.3)
    fig.tight_layout()
    from cli.output_files import replacing

    try:
        with replacing(path, "the chart") as tmp:
            fig.savefig(tmp, format=os.path.splitext(str(path))[1][1:] or "png")
    finally:
        plt.close(fig)
