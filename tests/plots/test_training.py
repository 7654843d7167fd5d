"""Learning curves from a trainer's progress.csv (stable-baselines3's CSV logger keys)."""

import csv

import numpy as np
import pytest

from hearnav.cli import main
from hearnav.errors import ConfigError
from hearnav.plots.training import find_progress, read_progress, training_figure
from tests.plots.run_fixtures import non_blank


def _write(folder, rows):
    folder.mkdir(parents=True, exist_ok=True)
    keys = list(dict.fromkeys(k for r in rows for k in r))
    with open(folder / "progress.csv", "w", newline="") as fh:
        writer = csv.DictWriter(fh, fieldnames=keys)
        writer.writeheader()
        writer.writerows(rows)
    return folder


ROWS = [{"time/total_timesteps": 2048 * k, "rollout/ep_rew_mean": 0.5 * k, "train/entropy_loss": -1.4 + 0.1 * k,
         "val/gain_db": "" if k % 2 else 0.25 * k} for k in range(1, 5)]


def test_three_panels_with_units_and_the_entropy_negated(tmp_path):
    fig = training_figure(read_progress(find_progress(_write(tmp_path / "t", ROWS))), {"still": 0.0})
    ret, val, ent = fig.axes
    assert [ax.get_xlabel() for ax in fig.axes] == ["environment steps"] * 3
    assert ret.get_ylabel() == "mean episode return (dB, sum of the trainer's rewards)"
    assert val.get_ylabel() == "mean end gain on the val suite (dB)"
    assert ent.get_ylabel() == "mean entropy of the action distribution (nats)"
    # SB3's PPO logs entropy_loss = -mean(entropy)
    assert ent.get_lines()[0].get_ydata() == pytest.approx([1.3, 1.2, 1.1, 1.0])
    assert val.get_lines()[0].get_xdata().tolist() == [4096, 8192]  # empty cells are left out
    assert any(line.get_label() == "still (benchmark run)" for line in val.get_lines())


@pytest.mark.parametrize("reward, label", [("paired", "mean episode return (dB, sum of paired rewards)"),
                                           ("end-score", "mean episode return (dB: the gain on the reward windows)")])
def test_the_return_says_what_it_sums(tmp_path, reward, label):
    fig = training_figure(read_progress(find_progress(_write(tmp_path / "t", ROWS))), reward=reward)
    assert fig.axes[0].get_ylabel() == label
    assert fig.axes[1].get_lines()[0].get_label() == "the policy being trained"


def test_a_missing_column_is_said_on_its_panel(tmp_path):
    rows = [{k: v for k, v in r.items() if k != "train/entropy_loss"} for r in ROWS]
    fig = training_figure(read_progress(find_progress(_write(tmp_path / "t", rows))))
    assert [t.get_text() for t in fig.axes[2].texts] == ["not in the log"]


def test_progress_is_found_below_the_folder(tmp_path):
    _write(tmp_path / "t" / "logs", ROWS)
    assert find_progress(tmp_path / "t") == tmp_path / "t" / "logs" / "progress.csv"


def test_no_csv_is_one_line(tmp_path):
    with pytest.raises(ConfigError) as err:
        find_progress(tmp_path)
    assert str(err.value) == (f"TRAIN_DIR '{tmp_path}': expected a progress.csv (the trainer's CSV log), found none; "
                              f"train with CSV logging or give the folder that holds it")


def test_plot_training_command(tmp_path, capsys):
    folder = _write(tmp_path / "t", ROWS)
    assert main(["plot", "training", str(folder)]) == 0
    assert capsys.readouterr().out.splitlines()[0] == f"2 figure file(s) in {(folder / 'figures').resolve()}"
    assert non_blank(folder / "figures" / "training.png")
    assert np.isfinite(read_progress(folder / "progress.csv")["rollout/ep_rew_mean"]).all()
