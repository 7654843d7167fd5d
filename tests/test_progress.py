"""Feedback on long work: lines when the output is not a terminal, every few seconds while a stage runs."""

import io
import time

from hearnav.progress import Feedback


def test_quick_stages_print_nothing_and_notes_print_at_once():
    out = io.StringIO()
    with Feedback(out, interval=60, tty=False) as fb:
        for k in range(4):
            fb("episodes", k, 3)
        fb("figures", 0, 2)
        fb.note("drawing")
    assert out.getvalue().splitlines() == ["hearnav: drawing"]


def test_a_reported_stage_says_when_it_ends():
    out = io.StringIO()
    with Feedback(out, interval=0.1, tty=False) as fb:
        fb("slow", 0, 2)
        deadline = time.monotonic() + 5  # a hang guard, not a speed assertion
        while "hearnav: slow: 0/2" not in out.getvalue() and time.monotonic() < deadline:
            time.sleep(0.02)
        fb("slow", 2, 2)
    assert out.getvalue().splitlines()[-1].startswith("hearnav: slow: 2/2")


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
