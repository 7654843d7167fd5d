"""A vectorised environment whose worker processes each step a group of environments per message.

stable-baselines3's SubprocVecEnv gives each environment its own process and steps them in lock step: every
vectorised step wakes each worker for one environment step (about 1.5-3 ms here) and waits for the slowest.
On 2 cores two such workers reached 1.29x the rate of one process (``benchmarks/train_throughput.py``, every
scene's tables opened first): a worker waits whenever the other's step is a reset or a longer render.
Here each worker owns ``len(env_fns) / workers`` environments and steps them all for one message, so a wake-up
carries several steps and the group's summed step time varies less than one step's. Semantics are
SubprocVecEnv's: auto-reset with ``terminal_observation`` and ``TimeLimit.truncated`` in the info, per-environment
seeds and options at reset, and the attribute and method calls stable-baselines3 makes.
"""

from __future__ import annotations

import multiprocessing as mp
from collections.abc import Callable, Sequence
from typing import Any

import gymnasium as gym
import numpy as np
from stable_baselines3.common.vec_env.base_vec_env import CloudpickleWrapper, VecEnv

EnvFn = Callable[[], gym.Env]


def _step(env: gym.Env, action: Any) -> tuple[Any, float, bool, dict, dict]:
    """One step in SB3's VecEnv convention: reset at the episode's end, the last observation in the info."""
    observation, reward, terminated, truncated, info = env.step(action)
    done = terminated or truncated
    info["TimeLimit.truncated"] = truncated and not terminated
    reset_info: dict = {}
    if done:
        info["terminal_observation"] = observation
        observation, reset_info = env.reset()
    return observation, float(reward), bool(done), info, reset_info


def _join(parts: Sequence[Any], join: Callable[[list], np.ndarray] = np.stack) -> Any:
    """Join observations (``np.stack``: one per environment) or batches of them (``np.concatenate``): key by
    key for Dict spaces, else as arrays."""
    if isinstance(parts[0], dict):
        return {k: join([p[k] for p in parts]) for k in parts[0]}
    return join(list(parts))


def _group_worker(remote: Any, parent_remote: Any, fns: CloudpickleWrapper) -> None:
    from stable_baselines3.common.env_util import is_wrapped

    parent_remote.close()
    envs = [fn() for fn in fns.var]
    while True:
        try:
            cmd, data = remote.recv()
        except (EOFError, KeyboardInterrupt):
            break
        if cmd == "step":
            results = [_step(env, a) for env, a in zip(envs, data)]
            obs, rewards, dones, infos, reset_infos = zip(*results)
            remote.send((_join(obs), np.array(rewards, np.float32), np.array(dones), list(infos),
                         list(reset_infos)))
        elif cmd == "reset":
            seeds, options = data
            pairs = [env.reset(seed=s, **({"options": o} if o else {})) for env, s, o in zip(envs, seeds, options)]
            remote.send((_join([p[0] for p in pairs]), [p[1] for p in pairs]))
        elif cmd == "get_spaces":
            remote.send((envs[0].observation_space, envs[0].action_space))
        elif cmd == "get_attr":
            index, name = data
            remote.send(envs[index].get_wrapper_attr(name))
        elif cmd == "set_attr":
            index, name, value = data
            remote.send(setattr(envs[index], name, value))
        elif cmd == "env_method":
            index, name, args, kwargs = data
            remote.send(envs[index].get_wrapper_attr(name)(*args, **kwargs))
        elif cmd == "is_wrapped":
            index, wrapper = data
            remote.send(is_wrapped(envs[index], wrapper))
        elif cmd == "close":
            for env in envs:
                env.close()
            remote.close()
            break


class GroupVecEnv(VecEnv):
    """``len(env_fns)`` environments stepped by ``workers`` processes, each stepping its group per message."""

    def __init__(self, env_fns: list[EnvFn], workers: int, start_method: str = "forkserver"):
        self.groups = [list(g) for g in np.array_split(np.arange(len(env_fns)), workers) if len(g)]
        context = mp.get_context(start_method)
        self.remotes, self.processes = [], []
        for group in self.groups:
            remote, work_remote = context.Pipe()
            process = context.Process(target=_group_worker, daemon=True,
                                      args=(work_remote, remote, CloudpickleWrapper([env_fns[i] for i in group])))
            process.start()
            work_remote.close()
            self.remotes.append(remote)
            self.processes.append(process)
        self.closed = False
        self.waiting = False
        self.remotes[0].send(("get_spaces", None))
        observation_space, action_space = self.remotes[0].recv()
        super().__init__(len(env_fns), observation_space, action_space)

    def _where(self, index: int) -> tuple[Any, int]:
        """The remote that holds environment ``index`` and its index within that worker's group."""
        for remote, group in zip(self.remotes, self.groups):
            if index in group:
                return remote, group.index(index)
        raise IndexError(f"environment {index} of {self.num_envs}")

    def step_async(self, actions: np.ndarray) -> None:
        for remote, group in zip(self.remotes, self.groups):
            remote.send(("step", [actions[i] for i in group]))
        self.waiting = True

    def step_wait(self) -> tuple[Any, np.ndarray, np.ndarray, list[dict]]:
        results = [remote.recv() for remote in self.remotes]
        self.waiting = False
        obs, rewards, dones, infos, reset_infos = zip(*results)
        self.reset_infos = [info for part in reset_infos for info in part]
        return (_join(obs, np.concatenate), np.concatenate(rewards), np.concatenate(dones),
                [info for part in infos for info in part])

    def reset(self) -> Any:
        for remote, group in zip(self.remotes, self.groups):
            remote.send(("reset", ([self._seeds[i] for i in group], [self._options[i] for i in group])))
        results = [remote.recv() for remote in self.remotes]
        obs, reset_infos = zip(*results)
        self.reset_infos = [info for part in reset_infos for info in part]
        self._reset_seeds()
        self._reset_options()
        return _join(obs, np.concatenate)

    def close(self) -> None:
        if self.closed:
            return
        if self.waiting:
            for remote in self.remotes:
                remote.recv()
        for remote in self.remotes:
            remote.send(("close", None))
        for process in self.processes:
            process.join()
        self.closed = True

    def _indices(self, indices: Any) -> list[int]:
        if indices is None:
            return list(range(self.num_envs))
        return [indices] if isinstance(indices, int) else list(indices)

    def _call(self, cmd: str, indices: Any, *payload: Any) -> list[Any]:
        """Send ``cmd`` for every index first, then collect the answers: the workers answer in parallel, each
        pipe in the order it was sent."""
        sent = []
        for i in self._indices(indices):
            remote, local = self._where(i)
            remote.send((cmd, (local, *payload)))
            sent.append(remote)
        return [remote.recv() for remote in sent]

    def get_attr(self, attr_name: str, indices: Any = None) -> list[Any]:
        return self._call("get_attr", indices, attr_name)

    def set_attr(self, attr_name: str, value: Any, indices: Any = None) -> None:
        self._call("set_attr", indices, attr_name, value)

    def env_method(self, method_name: str, *method_args: Any, indices: Any = None, **method_kwargs: Any) -> list[Any]:
        return self._call("env_method", indices, method_name, method_args, method_kwargs)

    def env_is_wrapped(self, wrapper_class: type, indices: Any = None) -> list[bool]:
        return self._call("is_wrapped", indices, wrapper_class)
