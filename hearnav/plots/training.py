"""Learning curves of a training folder: SB3's ``progress.csv`` (return, validation gain, entropy)."""

from __future__ import annotations

import csv
import math
import os
import re
from pathlib import Path

import numpy as np

from hearnav.errors import ConfigError, shown_path
from hearnav.plots import style

PROGRESS_FILE = "progress.csv"
#: The x axis: environment steps so far (stable-baselines3's logger key).
STEPS = "time/total_timesteps"
#: Panels: (title, y label, column patterns tried in order, sign). SB3 logs ``train/entropy_loss`` as minus the
#: policy's mean entropy (stable-baselines3 PPO.train), so it is negated to show the entropy.
PANELS = (
    ("Episode return while training", "mean episode return (dB, sum of the trainer's rewards)",
     (r"^rollout/ep_rew_mean$",), 1.0),
    ("Validation gain of the current policy", "mean end gain on the val suite (dB)",
     (r"^(val|eval)[^/]*/.*gain", r"gain_db$", r"^eval/mean_reward$"), 1.0),
    ("Policy entropy", "mean entropy of the action distribution (nats)", (r"^train/entropy_loss$",), -1.0),
)


#: The return panel's y label by the trainer's ``reward`` option (train.json's config).
RETURN_LABELS = {"paired": "mean episode return (dB, sum of paired rewards)",
                 "end-score": "mean episode return (dB: the gain on the reward windows)"}


def find_progress(folder: str | os.PathLike) -> Path:
    """The ``progress.csv`` of a training folder (at its top, else the first found below it)."""
    folder = Path(folder)
    if not folder.is_dir():
        found = "a file" if folder.exists() else "nothing there"
        raise ConfigError(f"TRAIN_DIR {shown_path(str(folder))}: expected a training folder, found {found}; give the "
                          f"--out folder of 'hearnav train'")
    top = folder / PROGRESS_FILE
    found = top if top.is_file() else next(iter(sorted(folder.rglob(PROGRESS_FILE))), None)
    if found is None:
        raise ConfigError(f"TRAIN_DIR {shown_path(str(folder))}: expected a {PROGRESS_FILE} (the trainer's CSV log), "
                          f"found none; train with CSV logging or give the folder that holds it")
    return found


def read_progress(path: Path) -> dict[str, np.ndarray]:
    """The CSV's columns as float arrays (NaN where a row left a column empty)."""
    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    if not rows:
        raise ConfigError(f"{shown_path(str(path))}: expected rows of training progress, found none; train for at "
                          f"least one logging interval")

    def number(text: str | None) -> float:
        try:
            return float(text) if text not in (None, "") else math.nan
        except ValueError:
            return math.nan

    return {key: np.array([number(r.get(key)) for r in rows]) for key in rows[0] if key}


def _column(columns: dict[str, np.ndarray], patterns) -> str | None:
    for pattern in patterns:
        for key in columns:
            if re.search(pattern, key) and np.isfinite(columns[key]).any():
                return key
    return None


def training_figure(columns: dict[str, np.ndarray], baselines: dict[str, float] | None = None, source: str = "",
                    reward: str | None = None):
    """Three panels against environment steps; ``baselines`` (policy: mean gain dB) are drawn as horizontal lines
    on the validation panel; ``reward`` (the trainer's reward option) names what the returns sum."""
    steps = columns.get(STEPS)
    if steps is None or not np.isfinite(steps).any():
        steps = np.arange(len(next(iter(columns.values()), [])), dtype=float)
        xlabel = "log row"
    else:
        xlabel = "environment steps"
    fig, axes = style.new_figure(12.5, 3.8, ncols=3)
    for ax, (title, ylabel, patterns, sign) in zip(axes, PANELS):
        key = _column(columns, patterns)
        if key is None:
            ax.text(0.5, 0.5, "not in the log", ha="center", va="center", transform=ax.transAxes, color="0.4")
        else:
            ok = np.isfinite(columns[key]) & np.isfinite(steps)
            ax.plot(steps[ok], sign * columns[key][ok], "-o", ms=3, c=style.POLICY_COLOURS[0], lw=1.5,
                    label="the policy being trained" if title.startswith("Validation") else key)
        if title.startswith("Episode return") and reward in RETURN_LABELS:
            ylabel = RETURN_LABELS[reward]
        if title.startswith("Validation") and baselines:
            for k, (name, value) in enumerate(baselines.items()):
                ax.axhline(value, ls="--", lw=1.1, c=style.policy_colour(k + 1), label=f"{name} (benchmark run)")
            ax.legend(fontsize=7, frameon=False)
        ax.set_title(title, fontsize=9.5)
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel, fontsize=8.5)
        style.tidy(ax)
    fig.suptitle(f"Training progress{f' ({source})' if source else ''}: the learning policy against environment "
                 f"steps", fontsize=10)
    return fig


def baseline_gains(run) -> dict[str, float]:
    """The mean gain (dB) of every non-privileged policy of a run's summary."""
    policies = ((run.summary or {}).get("policies") or {}) if run is not None else {}
    return {name: entry["gain_db"]["mean"] for name, entry in policies.items()
            if not entry.get("privileged") and (entry.get("gain_db") or {}).get("mean") is not None}


def plot_training(train_dir: str | os.PathLike, out: str | os.PathLike, run=None) -> list[Path]:
    """Write ``training.png/.svg`` of a training folder; returns the paths."""
    path = find_progress(train_dir)
    fig = training_figure(read_progress(path), baseline_gains(run), Path(train_dir).name, _reward(Path(train_dir)))
    return style.save(fig, out, "training")


def _reward(train_dir: Path) -> str | None:
    """The trainer's reward option from ``train.json``, or None when it is missing or unreadable."""
    import json

    try:
        return json.loads((train_dir / "train.json").read_text(encoding="utf-8"))["config"].get("reward", "paired")
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        return None
