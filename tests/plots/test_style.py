"""The figures' look: the palette and PNG + SVG output."""

from hearnav.plots import style
from tests.plots.run_fixtures import non_blank


def test_palette_is_okabe_ito():
    # Okabe & Ito (2008), "Color Universal Design (CUD): how to make figures and presentations that are friendly
    # to colorblind people", the published RGB values of the eight colours.
    published = {"black": (0, 0, 0), "orange": (230, 159, 0), "sky blue": (86, 180, 233),
                 "bluish green": (0, 158, 115), "yellow": (240, 228, 66), "blue": (0, 114, 178),
                 "vermillion": (213, 94, 0), "reddish purple": (204, 121, 167)}
    as_rgb = {k: tuple(int(v[i:i + 2], 16) for i in (1, 3, 5)) for k, v in style.OKABE_ITO.items()}
    assert as_rgb == published
    assert set(style.POLICY_COLOURS) <= set(style.OKABE_ITO.values())
    assert style.TARGET_COLOUR not in style.POLICY_COLOURS  # no path shares the target's colour


def test_save_writes_png_and_svg(tmp_path):
    fig, ax = style.new_figure(3, 2)
    ax.plot([0, 1], [0, 1])
    paths = style.save(fig, tmp_path / "new", "line")
    assert [p.name for p in paths] == ["line.png", "line.svg"]
    assert non_blank(paths[0])
    assert paths[1].read_text().lstrip().startswith("<?xml")


def test_blank_figure_is_told_apart(tmp_path):
    fig, _ = style.new_figure(3, 2)
    fig.axes[0].set_axis_off()
    assert not non_blank(style.save(fig, tmp_path, "blank")[0])  # the check of the other tests can fail
