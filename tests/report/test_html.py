"""The HTML report: it parses, embeds every figure, links only to files that exist, shows the caution by the audio."""

from html.parser import HTMLParser
from pathlib import Path
from urllib.parse import unquote

import pytest

from hearnav.cli.report_cmd import make_report
from hearnav.plots.rundata import load_run
from hearnav.report.html import CAUTION, audio_files, table_html
from tests.plots import run_fixtures

# the shared tiny run and the fixtures it needs (assigned, so the test functions' parameters use them)
env_cache = run_fixtures.env_cache
private_cache = run_fixtures.private_cache
run_dir = run_fixtures.run_dir
scene_dir = run_fixtures.scene_dir
suite_file = run_fixtures.suite_file


class Page(HTMLParser):
    """Collects tags, links, sources and the text of a page, and checks that every opened tag is closed."""

    VOID = {"meta", "img", "br", "link", "source", "input", "hr"}

    def __init__(self):
        super().__init__()
        self.stack, self.tags, self.links, self.text = [], [], [], []

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        self.tags.append((tag, attrs))
        for key in ("href", "src"):
            if key in attrs:
                self.links.append(attrs[key])
        if tag not in self.VOID:
            self.stack.append(tag)

    def handle_endtag(self, tag):
        assert self.stack and self.stack[-1] == tag, f"</{tag}> closes <{self.stack[-1] if self.stack else None}>"
        self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


@pytest.fixture(scope="module")
def report(run_dir, suite_file, tmp_path_factory, env_cache, scene_dir):
    out = tmp_path_factory.mktemp("report") / "sub" / "report.html"
    with pytest.MonkeyPatch.context() as mp:  # the trajectories rebuild the episodes on the test room
        mp.setenv("HEARNAV_CACHE", str(env_cache))
        mp.setenv("HEARNAV_SCENES", str(scene_dir))
        path, figures = make_report(load_run(run_dir), out, suite=str(suite_file))
    page = Page()
    page.feed(path.read_text(encoding="utf-8"))
    page.close()
    return path, figures, page


def test_report_parses_and_closes_every_tag(report):
    _, _, page = report
    assert page.stack == []
    assert page.tags[0][0] == "html"
    assert "No trajectory figures" not in "".join(page.text)


def test_every_figure_is_embedded(report):
    path, figures, page = report
    pngs = [p for p in figures if p.suffix == ".png"]
    assert len(pngs) >= 3 + 3  # three gain figures, three episodes
    embedded = [a["src"] for t, a in page.tags if t == "img"]
    assert len(embedded) == len(pngs) and all(src.startswith("data:image/png;base64,") for src in embedded)
    import base64

    assert {base64.b64decode(src.split(",", 1)[1]) for src in embedded} == {p.read_bytes() for p in pngs}


def test_links_only_to_files_that_exist_and_nothing_remote(report):
    path, _, page = report
    local = [link for link in page.links if not link.startswith("data:")]
    assert local  # the SVGs and the audio
    for link in local:
        assert "://" not in link and not link.startswith("//")
        assert (path.parent / unquote(link)).resolve().is_file(), link
    assert "<script" not in path.read_text() and "@import" not in path.read_text()


def test_audio_players_with_the_caution_beside_them(report, run_dir):
    path, _, page = report
    saved = audio_files(run_dir)
    assert saved and all(set(tracks) == {"mixture", "estimate", "reference"} for eps in saved.values()
                         for tracks in eps.values())
    players = [a["src"] for t, a in page.tags if t == "audio"]
    assert len(players) == sum(len(tracks) for eps in saved.values() for tracks in eps.values())
    assert CAUTION in "".join(page.text) and "LUFS" in CAUTION


def test_tables_hold_the_summary(report):
    _, _, page = report
    text = " ".join(page.text)
    for heading in ("Summary", "Per scene", "Paired comparisons", "By target category"):
        assert heading in text
    assert "vs still: diff dB" in text and "env-test-room" in text


def test_cells_are_escaped():
    assert table_html(["<a>"], [["x & y"]]) == ("<div class='scroll'><table><thead><tr><th>&lt;a&gt;</th></tr></thead>"
                                               "<tbody><tr><td>x &amp; y</td></tr></tbody></table></div>")


def test_a_run_without_audio_says_so(tmp_path):
    from hearnav.report.html import render

    text = render(tmp_path, None, [], [], tmp_path, "t")
    assert "No audio was saved for this run" in text and "No summary.json" in text
    assert Path(tmp_path).is_dir()
