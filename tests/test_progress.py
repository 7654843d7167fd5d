"""Feedback on long work: lines when the output is not a terminal, every few seconds while a stage runs."""

import io
import time

from hearnav.progress import Feedback


def test_lines_at_start_and_end_of_each_stage():
    out = io.StringIO()
    with Feedback(out, interval=60, tty=False) as fb:
        for k in range(4):
            fb("episodes", k, 3)
        fb("figures", 0, 2)
        fb.note("drawing")
    lines = out.getvalue().splitlines()
    assert [line.split(" (")[0] for line in lines] == ["hearnav: episodes: 0/3", "hearnav: episodes: 3/3",
                                                       "hearnav: figures: 0/2", "hearnav: drawing"]


def test_a_line_every_interval_while_a_stage_runs():
    out = io.StringIO()
    with Feedback(out, interval=0.2, tty=False) as fb:
        fb("slow", 0, 5)
        deadline = time.monotonic() + 5  # a hang guard, not a speed assertion
        while out.getvalue().count("hearnav: slow: 0/5") < 3 and time.monotonic() < deadline:
            time.sleep(0.05)
    assert out.getvalue().count("hearnav: slow: 0/5") >= 3


def test_a_terminal_gets_a_bar():
    out = io.StringIO()
    with Feedback(out, tty=True) as fb:
        fb("episodes", 0, 2)
        fb("episodes", 2, 2)
    assert "episodes" in out.getvalue() and "2/2" in out.getvalue()
