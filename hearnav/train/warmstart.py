"""Warm start: behaviour cloning of a scripted policy before PPO, optionally with DAgger rounds.

A fresh network acts at random, and with a reward whose per-step spread (several dB) dwarfs what one step
towards the target gains (a few tenths of a dB), PPO takes far more samples than a CPU budget allows to find
the way. The warm start plays ``episodes`` episodes of a teacher policy on the training scenes, fits the policy
network to the teacher's actions by maximum likelihood (behaviour cloning, Pomerleau 1991) and the value network
to the discounted returns earned under the trainer's reward, then PPO goes on from there.

The teacher may be privileged (``approach`` knows where the target is): it then gets the environment's
privileged view, as in the benchmark, while the network still sees only the agent's observation, so what is
cloned is a non-privileged policy (learning from a privileged teacher, Chen et al. 2019). A clone drifts to
poses its teacher never visited; each of ``dagger_rounds`` rounds lets the clone act for ``episodes`` episodes,
labels every pose it reaches with the teacher's action there, and fits again on everything gathered so far
(DAgger, Ross, Gordon & Bagnell 2011, with the teacher's share beta = 0 after the first round). DAgger needs a
teacher whose action depends on the pose it finds, not on its own past actions (``approach`` replans;
``follow-bearing``'s dead reckoning assumes its actions were taken). The teacher's
privileged flag, each round's agreement and the mean return of whoever acted are recorded.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from hearnav.train.config import TrainConfig


def _discounted(rewards: list[float], gamma: float) -> list[float]:
    """Discounted reward-to-go of each step of one episode."""
    to_go, run = [], 0.0
    for r in reversed(rewards):
        run = r + gamma * run
        to_go.append(run)
    return to_go[::-1]


def collect(config: TrainConfig, make_env: Any, student: Callable[[dict], int] | None = None,
            round_index: int = 0) -> dict:
    """Play ``config.warm_start.episodes`` seeded episodes of ``make_env()`` (the trainer's own environment, its
    reward included), labelling every step with the teacher's action; the teacher acts, or ``student`` (an
    observation -> action function) does when it is given. The observations (dict of stacked arrays), the
    teacher's actions, the discounted returns, the mean return of whoever acted and the teacher's name and
    privileged flag."""
    from hearnav.bench.registry import load_policy
    from hearnav.bench.runner import policy_extra

    options = config.warm_start
    name, teacher = load_policy(options.policy)
    env = make_env()
    entropy = [config.seed, 7] + ([round_index] if round_index else [])  # round 0 as before DAgger existed
    seeds = [int(s.generate_state(1)[0]) for s in np.random.SeedSequence(entropy).spawn(options.episodes)]
    obs_rows: dict[str, list[np.ndarray]] = {}
    actions: list[int] = []
    returns: list[float] = []
    totals: list[float] = []
    try:
        for seed in seeds:
            obs, info = env.reset(seed=seed)
            extra = policy_extra(env, teacher, seed)
            teacher.reset(obs, {**info, **extra})
            rewards: list[float] = []
            done = False
            while not done:
                label = int(teacher.act(obs, {**info, **extra}))
                for key, value in obs.items():
                    obs_rows.setdefault(key, []).append(np.asarray(value, np.float32))
                actions.append(label)
                obs, reward, terminated, truncated, info = env.step(label if student is None else student(obs))
                rewards.append(float(reward))
                done = terminated or truncated
            returns += _discounted(rewards, config.ppo.gamma)
            totals.append(sum(rewards))
    finally:
        env.close()
    return {"teacher": name, "privileged": bool(getattr(teacher, "privileged", False)),
            "obs": {k: np.stack(v) for k, v in obs_rows.items()}, "actions": np.array(actions, np.int64),
            "returns": np.array(returns, np.float32), "mean_return": float(np.mean(totals))}


def merge(a: dict, b: dict) -> dict:
    """Two collections as one (DAgger's aggregated data set); ``b``'s mean return is kept."""
    return {**b, "obs": {k: np.concatenate([a["obs"][k], b["obs"][k]]) for k in a["obs"]},
            "actions": np.concatenate([a["actions"], b["actions"]]),
            "returns": np.concatenate([a["returns"], b["returns"]])}


def clone(model: Any, data: dict, config: TrainConfig, round_index: int = 0) -> float:
    """Fit ``model.policy`` to the teacher's actions (cross-entropy) and returns (mean squared error) for
    ``config.warm_start.epochs`` epochs of shuffled minibatches; the final agreement with the teacher."""
    import torch

    options = config.warm_start
    policy = model.policy
    obs = {k: torch.as_tensor(v) for k, v in data["obs"].items()}
    actions = torch.as_tensor(data["actions"])
    returns = torch.as_tensor(data["returns"])
    n = len(actions)
    optimiser = torch.optim.Adam(policy.parameters(), lr=options.learning_rate)
    generator = torch.Generator().manual_seed(config.seed + round_index)
    policy.set_training_mode(True)
    for _ in range(options.epochs):
        order = torch.randperm(n, generator=generator)
        for start in range(0, n, options.batch_size):
            idx = order[start:start + options.batch_size]
            values, log_prob, _ = policy.evaluate_actions({k: v[idx] for k, v in obs.items()}, actions[idx])
            loss = -log_prob.mean() + 0.5 * torch.mean((values.flatten() - returns[idx]) ** 2)
            optimiser.zero_grad()
            loss.backward()
            torch.nn.utils.clip_grad_norm_(policy.parameters(), config.ppo.max_grad_norm)
            optimiser.step()
    policy.set_training_mode(False)
    with torch.no_grad():
        chosen = policy.get_distribution(obs).distribution.probs.argmax(dim=1)
    return float((chosen == actions).float().mean())


def run(model: Any, config: TrainConfig, make_env: Any, report: Callable[[str], None] = lambda line: None) -> dict:
    """Clone the teacher into ``model``, then run the DAgger rounds; what was done (recorded in train.json)."""
    options = config.warm_start

    def student(obs: dict) -> int:
        action, _ = model.policy.predict(obs, deterministic=True)
        return int(action)

    data = collect(config, make_env)
    rounds = [{"actor": "teacher", "mean_return": round(data["mean_return"], 4), "steps": int(len(data["actions"])),
               "agreement": clone(model, data, config)}]
    report(f"teacher's mean return {rounds[0]['mean_return']:+.2f}, agreement {rounds[0]['agreement']:.1%}")
    for k in range(1, options.dagger_rounds + 1):
        new = collect(config, make_env, student, k)
        data = merge(data, new)
        rounds.append({"actor": "clone", "mean_return": round(new["mean_return"], 4),
                       "steps": int(len(data["actions"])), "agreement": clone(model, data, config, k)})
        report(f"DAgger round {k}: the clone's mean return {rounds[-1]['mean_return']:+.2f}, agreement "
               f"{rounds[-1]['agreement']:.1%} on {rounds[-1]['steps']} steps")
    return {"teacher": data["teacher"], "teacher_privileged": data["privileged"], "episodes": options.episodes,
            "epochs": options.epochs, "dagger_rounds": options.dagger_rounds, "steps": rounds[-1]["steps"],
            "agreement": rounds[-1]["agreement"], "teacher_mean_return": rounds[0]["mean_return"], "rounds": rounds}
