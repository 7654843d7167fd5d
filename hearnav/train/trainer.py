"""``hearnav train``: PPO on the environment's Dict observations, evaluated with the benchmark's runner.

A training folder DIR holds ``train.json`` (command, seed, versions, wall time of each session),
``checkpoints/step-N.zip`` and ``checkpoint.json`` (the last one), ``best.zip`` and ``best.npz`` (the model
with the best mean gain_db on the evaluation episodes, and its network for :mod:`hearnav.train.numpy_policy`),
``eval.jsonl`` (one line per evaluation) and ``logs/<session>/`` (SB3's CSV, and TensorBoard when installed).
Needs the ``train`` extra (torch, stable-baselines3).
"""

from __future__ import annotations

import json
import signal
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

from hearnav.errors import ConfigError, HearnavError, did_you_mean, short_repr, shown_path
from hearnav.train.config import TrainConfig
from hearnav.train.runinfo import RESUMABLE, command_line, config_digest, read_json, versions, write_json


def _env_factory(options: dict, rank: int, reward: str = "paired",
                 reward_windows: int | None = None) -> Callable[[], Any]:
    """A function that builds worker ``rank``'s environment (in a worker process when there are several), with the
    trainer's reward (:mod:`hearnav.train.reward`)."""

    def make() -> Any:
        import torch
        from stable_baselines3.common.monitor import Monitor

        from hearnav.env.core import HearNavEnv

        torch.set_num_threads(1)
        if rank >= 0:  # a worker process: Ctrl-C is the trainer's to handle, the worker keeps serving
            signal.signal(signal.SIGINT, signal.SIG_IGN)
        env = HearNavEnv(**options)
        if reward == "end-score":
            from hearnav.train.reward import EndScoreReward

            env = EndScoreReward(env, reward_windows)
        return Monitor(env)

    return make


def config_env_factory(config: TrainConfig, rank: int) -> Callable[[], Any]:
    """:func:`_env_factory` for ``config``'s scenes, environment options and reward."""
    return _env_factory(config.env_config(config.scene_names()).model_dump(), rank, config.reward,
                        config.reward_windows)


def make_vec_env(config: TrainConfig) -> Any:
    """The training VecEnv of ``config.n_envs`` environments: in this process (DummyVecEnv) for one worker, else
    :class:`hearnav.train.vector.GroupVecEnv` (each worker steps its ``envs_per_worker`` per message);
    VecNormalize on rewards if asked."""
    from stable_baselines3.common.vec_env import DummyVecEnv, VecNormalize

    if config.workers == 1:
        venv = DummyVecEnv([config_env_factory(config, -1) for _ in range(config.n_envs)])
    else:
        from hearnav.train.vector import GroupVecEnv

        venv = GroupVecEnv([config_env_factory(config, k) for k in range(config.n_envs)], config.workers)
    if config.normalize_reward:
        venv = VecNormalize(venv, norm_obs=False, norm_reward=True, gamma=config.ppo.gamma)
    return venv


def new_model(config: TrainConfig, venv: Any, seed: int) -> Any:
    """A fresh PPO with MultiInputPolicy (the config's extractor, then separate policy and value MLPs) on cpu."""
    from stable_baselines3 import PPO
    from torch import nn

    hidden = list(config.net.hidden)
    kwargs: dict[str, Any] = dict(net_arch=dict(pi=hidden, vf=hidden),
                                  activation_fn={"tanh": nn.Tanh, "relu": nn.ReLU}[config.net.activation])
    from hearnav.train.extractor import ScaledExtractor

    filters = list(config.net.filters) if config.net.extractor == "cnn" else []
    keys = config.net.keys
    for key in keys or ():
        if key not in venv.observation_space.spaces:
            names = list(venv.observation_space.spaces)
            raise ConfigError(f"option 'net.keys': unknown observation key {key!r} (expected keys of the "
                              f"environment's observation); {did_you_mean(key, names)}")
    kwargs.update(features_extractor_class=ScaledExtractor,
                  features_extractor_kwargs={"filters": filters, "scale": config.net.scale_inputs,
                                             "keys": None if keys is None else list(keys)})
    return PPO("MultiInputPolicy", venv, policy_kwargs=kwargs, device="cpu", seed=seed, verbose=0,
               **config.ppo.model_dump())


def warm_start(model: Any, config: TrainConfig, progress: bool) -> dict:
    """Clone ``config.warm_start``'s teacher into ``model`` (:mod:`hearnav.train.warmstart`); what it did."""
    from hearnav.train import warmstart

    options = config.warm_start
    if progress:
        print(f"hearnav: warm start: {options.episodes} episodes of {options.policy}, then {options.epochs} epochs "
              f"of behaviour cloning, {options.dagger_rounds} DAgger rounds", flush=True)
    t0 = time.time()
    result = warmstart.run(model, config, config_env_factory(config, -1), (lambda line: print(f"hearnav: warm start: {line}", flush=True))
                           if progress else (lambda line: None))
    result["wall_time_s"] = round(time.time() - t0, 3)
    if progress:
        print(f"hearnav: warm start: done in {result['wall_time_s']:.0f} s", flush=True)
    return result


class Evaluator:
    """Mean gain_db of a model on the first episodes of a suite, played by the benchmark's own runner."""

    def __init__(self, config: TrainConfig):
        from hearnav.bench.suites import load_suite

        self.suite = load_suite(config.eval.suite)
        seeds = self.suite.episode_seeds()
        self.seeds = seeds[: config.eval.episodes] if config.eval.episodes else seeds
        self._env = None

    def check_spaces(self, space: Any) -> None:
        """ConfigError unless the suite's observations have the training observation space ``space``."""
        from hearnav.env.core import HearNavEnv

        self._env = HearNavEnv(**self.suite.env_config().model_dump())
        found = {k: v.shape for k, v in self._env.observation_space.spaces.items()}
        expected = {k: v.shape for k, v in space.spaces.items()}
        if found != expected:
            raise ConfigError(f"eval suite {self.suite.name!r} gives observations {short_repr(found, 160)}, but "
                              f"training gives {short_repr(expected, 160)} (expected the same shapes); give the "
                              f"training env the suite's feature options (n_bands, n_segments, patch_size)")

    def __call__(self, model: Any) -> dict:
        from hearnav.bench.policy import SB3Policy
        from hearnav.bench.runner import Task, run_episode

        policy, gains, returns = SB3Policy(model, deterministic=True), [], []
        for k, seed in enumerate(self.seeds):
            row = run_episode(self._env, "training", policy, Task("training", k, seed, None))
            if row.status != "ok":
                raise HearnavError(f"evaluation episode {k} of suite {self.suite.name!r} failed ({row.error}); "
                                   f"expected the model to play it")
            gains.append(row.gain_db)
            returns.append(row.episode_return)
        return {"suite": self.suite.name, "episodes": len(gains), "mean_gain_db": float(np.mean(gains)),
                "mean_return": float(np.mean(returns))}


class Folder:
    """The paths of a training folder."""

    def __init__(self, out: Path):
        self.root = Path(out)
        self.train_json = self.root / "train.json"
        self.checkpoint_json = self.root / "checkpoint.json"
        self.checkpoints = self.root / "checkpoints"
        self.best = self.root / "best.zip"
        self.best_npz = self.root / "best.npz"
        self.evals = self.root / "eval.jsonl"
        self.logs = self.root / "logs"


def _callback_class() -> type:
    from stable_baselines3.common.callbacks import BaseCallback

    class TrainingCallback(BaseCallback):
        """Evaluates, keeps the best model and saves checkpoints on schedule; stops when asked (Ctrl-C)."""

        def __init__(self, trainer: Trainer):
            super().__init__()
            self.trainer = trainer

        def _on_step(self) -> bool:
            return self.trainer.on_step(self.num_timesteps)

    return TrainingCallback


class ProgressBar:
    """A tqdm bar over environment steps, used when SB3's own bar cannot be (it needs ``rich``)."""

    def __init__(self, total: int, start: int):
        from tqdm import tqdm

        self.bar = tqdm(total=total, initial=start, unit="step", desc="training", disable=None, dynamic_ncols=True)

    def update(self, steps: int) -> None:
        self.bar.update(steps - self.bar.n)

    def close(self) -> None:
        self.bar.close()


def _has(module: str) -> bool:
    import importlib.util

    return importlib.util.find_spec(module) is not None


class Trainer:
    """One training session in a folder: a new run, or ``resume`` from its last checkpoint."""

    def __init__(self, config: TrainConfig, out: str | Path, resume: bool = False, progress: bool = True):
        self.config, self.folder, self.resume, self.progress = config, Folder(Path(out)), resume, progress
        self.stop_requested = False
        self.state: dict = {}

    # -- the folder ------------------------------------------------------------------------------------------

    def _check_folder(self) -> dict | None:
        f = self.folder
        if not self.resume:
            if f.train_json.exists() or f.checkpoint_json.exists():
                raise ConfigError(f"--out {shown_path(f.root)} already holds a training run (expected a new or empty "
                                  f"folder); pass --resume to continue it, or give another --out")
            return None
        if not f.checkpoint_json.exists():
            raise ConfigError(f"--resume: {shown_path(f.root)} has no checkpoint.json (expected a training folder "
                              f"with a checkpoint); start a new run without --resume")
        ckpt = read_json(f.checkpoint_json, "last checkpoint")
        if ckpt.get("config_digest") != config_digest(self.config):
            before = ckpt.get("config", {})
            now = self.config.model_dump(mode="json")
            changed = sorted(k for k in set(before) | set(now) if before.get(k) != now.get(k) and k not in RESUMABLE)
            names = ", ".join(changed) or "(unknown)"
            verb = "options {} differ" if len(changed) > 1 else "option {} differs"
            raise ConfigError(f"--resume: the {verb.format(names)} from the run in {shown_path(f.root)} (expected the "
                              f"same config; only {', '.join(RESUMABLE)} may change); use the run's config or "
                              f"another --out")
        return ckpt

    def _save_checkpoint(self, steps: int) -> None:
        f = self.folder
        f.checkpoints.mkdir(parents=True, exist_ok=True)
        model_path = f.checkpoints / f"step-{steps:010d}.zip"
        self.model.save(model_path)
        stats = None
        if self.config.normalize_reward:
            stats = f.checkpoints / f"step-{steps:010d}.vecnormalize.pkl"
            self.venv.save(stats)
        self.state.update(step=steps, model=str(model_path.relative_to(f.root)),
                          vecnormalize=str(stats.relative_to(f.root)) if stats else None,
                          config=self.config.model_dump(mode="json"), config_digest=config_digest(self.config))
        write_json(f.checkpoint_json, self.state)
        self.next_checkpoint = steps + self.config.checkpoint_every

    def _evaluate(self, steps: int) -> None:
        t0 = time.perf_counter()
        result = self.evaluator(self.model)
        result.update(step=steps, wall_time_s=round(time.perf_counter() - t0, 3))
        with open(self.folder.evals, "a", encoding="utf-8") as fh:
            fh.write(json.dumps(result, sort_keys=True) + "\n")
        self.model.logger.record("eval/mean_gain_db", result["mean_gain_db"])
        best = self.state.get("best")
        if best is None or result["mean_gain_db"] > best["mean_gain_db"]:
            from hearnav.train.export import export_npz

            tmp = self.folder.root / ".best.tmp.zip"
            self.model.save(tmp)
            tmp.replace(self.folder.best)
            export_npz(self.model, self.folder.best_npz)
            self.state["best"] = {k: result[k] for k in ("step", "suite", "episodes", "mean_gain_db")}
        self.next_eval = steps + self.config.eval.every_steps
        self.last_eval = self.state["last_eval"] = steps

    # -- the loop ----------------------------------------------------------------------------------------------

    def on_step(self, steps: int) -> bool:
        """Called by SB3 after every vectorised step; False stops training."""
        if self.bar:
            self.bar.update(steps)
        if steps >= self.next_eval:
            self._evaluate(steps)
        if steps >= self.next_checkpoint:
            self._save_checkpoint(steps)
        return not self.stop_requested

    def _on_sigint(self, signum: int, frame: Any) -> None:
        self.stop_requested = True
        signal.signal(signal.SIGINT, signal.default_int_handler)  # a second Ctrl-C stops at once

    def _session_info(self, started: float, status: str) -> None:
        info = read_json(self.folder.train_json, "run record") if self.folder.train_json.exists() else {
            "seed": self.config.seed, "config": self.config.model_dump(mode="json"), "sessions": []}
        sessions = info["sessions"]
        entry = {"command": command_line(), "resume": self.resume, "started_unix": round(started, 3),
                 "start_step": self.start_step, "end_step": int(self.model.num_timesteps),
                 "wall_time_s": round(time.time() - started, 3), "status": status, "versions": versions(),
                 "seed": self.config.seed, "workers": self.config.workers}
        if sessions and sessions[-1].get("started_unix") == entry["started_unix"]:
            sessions[-1] = entry
        else:
            sessions.append(entry)
        info.update(command=entry["command"], wall_time_s=round(sum(s["wall_time_s"] for s in sessions), 3),
                    steps=entry["end_step"], best=self.state.get("best"), status=status,
                    warm_start=self.state.get("warm_start"),
                    config=self.config.model_dump(mode="json"), versions=entry["versions"])
        write_json(self.folder.train_json, info)

    def _logger(self, session: int) -> Any:
        from stable_baselines3.common.logger import configure

        formats = ["csv"] + (["stdout"] if self.progress else []) + (["tensorboard"] if _has("tensorboard") else [])
        return configure(str(self.folder.logs / str(session)), formats)

    def run(self) -> dict:
        """Train to ``total_steps`` (or until Ctrl-C, which saves a checkpoint and raises KeyboardInterrupt);
        returns the contents of train.json."""
        import torch

        ckpt = self._check_folder()
        self.started = time.time()  # the session's wall time includes making the environments
        torch.set_num_threads(1)
        self.folder.root.mkdir(parents=True, exist_ok=True)
        self.evaluator = Evaluator(self.config)
        self.venv = make_vec_env(self.config)
        try:
            self.venv.env_method("preload")  # every worker opens (or builds) every scene's tables now, in parallel
            self.evaluator.check_spaces(self.venv.observation_space)
            return self._train(ckpt)
        finally:
            self.venv.close()

    def _train(self, ckpt: dict | None) -> dict:
        from stable_baselines3 import PPO

        f, cfg = self.folder, self.config
        if ckpt is None:
            self.model = new_model(cfg, self.venv, cfg.seed)
            self.state = {"best": None, "last_eval": None}
            if cfg.warm_start is not None:
                self.state["warm_start"] = warm_start(self.model, cfg, self.progress)
        else:
            self.state = ckpt
            if ckpt.get("vecnormalize"):
                from stable_baselines3.common.vec_env import VecNormalize

                self.venv = VecNormalize.load(str(f.root / ckpt["vecnormalize"]), self.venv.venv)
            self.model = PPO.load(f.root / ckpt["model"], env=self.venv, device="cpu")
            self.model.set_random_seed(cfg.seed + int(self.model.num_timesteps))  # fresh, repeatable episodes
        self.start_step = int(self.model.num_timesteps)
        session = len(read_json(f.train_json, "run record")["sessions"]) if f.train_json.exists() else 0
        self.model.set_logger(self._logger(session))
        last = self.state.get("last_eval")
        self.next_eval = (last + cfg.eval.every_steps) if last is not None else cfg.eval.every_steps
        self.last_eval = last
        self.next_checkpoint = self.start_step + cfg.checkpoint_every
        if ckpt is None and cfg.warm_start is not None:
            self._evaluate(self.start_step)  # the cloned policy, before PPO: the best so far until PPO beats it
        started = self.started
        self._session_info(started, "running")
        sb3_bar = self.progress and _has("rich") and _has("tqdm")  # SB3's own bar needs both
        self.bar = ProgressBar(cfg.total_steps, self.start_step) if self.progress and not sb3_bar else None
        previous = signal.signal(signal.SIGINT, self._on_sigint)
        try:
            remaining = max(0, cfg.total_steps - self.start_step)
            if remaining:
                self.model.learn(remaining, callback=_callback_class()(self), reset_num_timesteps=False,
                                 log_interval=1, progress_bar=sb3_bar)
        finally:
            signal.signal(signal.SIGINT, previous)
            if self.bar:
                self.bar.close()
        steps = int(self.model.num_timesteps)
        if not self.stop_requested and self.last_eval != steps:
            self._evaluate(steps)
        self.model.logger.record("time/total_timesteps", steps)
        self.model.logger.dump(steps)  # the last update's losses and evaluation (SB3 logs before each update)
        self._save_checkpoint(steps)
        self._session_info(started, "interrupted" if self.stop_requested else "completed")
        if self.stop_requested:
            raise KeyboardInterrupt
        return read_json(f.train_json, "run record")


def train(config: TrainConfig, out: str | Path, resume: bool = False, progress: bool = True) -> dict:
    """Run :class:`Trainer`; see the module docstring for what the folder gets."""
    return Trainer(config, out, resume, progress).run()
