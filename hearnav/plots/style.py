"""The figures' look: the Okabe-Ito palette, marker shapes, figure creation on the Agg canvas, PNG + SVG output."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from hearnav import files
from hearnav.errors import ConfigError

#: Okabe & Ito (2008), "Color Universal Design": eight colours told apart with every common colour-vision deficiency.
OKABE_ITO = {"black": "#000000", "orange": "#E69F00", "sky blue": "#56B4E9", "bluish green": "#009E73",
             "yellow": "#F0E442", "blue": "#0072B2", "vermillion": "#D55E00", "reddish purple": "#CC79A7"}
#: Colours given to policies in order; vermillion is kept for the target, so no path shares its colour.
POLICY_COLOURS = ("#0072B2", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000", "#F0E442")
TARGET_COLOUR = OKABE_ITO["vermillion"]
DISTRACTOR_COLOUR = "0.45"
BOUND_COLOUR = "0.1"
#: Marker shapes, so that roles differ by shape as well as colour.
TARGET_MARKER, DISTRACTOR_MARKER, BOUND_MARKER = "*", "X", "D"
START_MARKER, END_MARKER, COLLISION_MARKER = "o", "s", "x"
#: Both formats every figure is written in: PNG for the report and quick looks, SVG for print.
FORMATS = ("png", "svg")
DPI = 110

PLACE = files.Place("the figures", "choose a writable --out folder",
                    "free some space there, or choose an --out folder on a disk with room", ConfigError)


def policy_colour(index: int) -> str:
    """The colour of the ``index``-th policy of a figure."""
    return POLICY_COLOURS[index % len(POLICY_COLOURS)]


def new_figure(width: float, height: float, **subplots) -> tuple[Figure, object]:
    """A figure on its own Agg canvas (pyplot and the user's backend are left alone), laid out by matplotlib's
    constrained layout, and its axes."""
    fig = Figure(figsize=(width, height), dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    fig.patch.set_facecolor("white")
    return fig, fig.subplots(**subplots)


def tidy(ax) -> None:
    """Our axes look: no top and right spines, a light grid under the data, readable tick labels."""
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.grid(True, color="0.9", lw=0.6)
    ax.set_axisbelow(True)
    ax.tick_params(labelsize=8)


def save(fig: Figure, folder: str | Path, stem: str, formats: Sequence[str] = FORMATS) -> list[Path]:
    """Write ``fig`` as ``folder/stem.png`` and ``folder/stem.svg`` (atomically) and return the paths."""
    folder = Path(folder)
    files.make_folder(folder, PLACE)
    out = []
    for fmt in formats:
        path = folder / f"{stem}.{fmt}"
        files.atomic_write(path, lambda fh, fmt=fmt: fig.savefig(fh, format=fmt, dpi=DPI, bbox_inches="tight"),
                           PLACE)
        out.append(path)
    return out
