"""Warm start: behaviour cloning of a scripted policy before PPO.

A fresh network acts at random, and with a reward whose per-step spread (several dB) dwarfs what one step
towards the target gains (a few tenths of a dB), PPO takes far more samples than a CPU budget allows to find
the way. The warm start plays ``episodes`` episodes of a teacher policy (``follow-bearing`` by default: it sees
only what the agent sees) on the training scenes, fits the policy network to the teacher's actions by maximum
likelihood (behaviour cloning, Pomerleau 1991) and the value network to the discounted returns the teacher
earned under the trainer's reward, then PPO goes on from there. The teacher's privileged flag is recorded.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from hearnav.train.config import TrainConfig


def collect(config: TrainConfig, make_env: Any) -> dict:
    """Play the teacher on ``config.warm_start.episodes`` seeded episodes of ``make_env()`` (the trainer's own
    environment, its reward included); the observations (dict of stacked arrays), actions, discounted returns
    and the teacher's mean return."""
    from hearnav.bench.registry import load_policy

    options = config.warm_start
    name, teacher = load_policy(options.policy)
    env = make_env()
    seeds = [int(s.generate_state(1)[0]) for s in
             np.random.SeedSequence([config.seed, 7]).spawn(options.episodes)]
    obs_rows: dict[str, list[np.ndarray]] = {}
    actions: list[int] = []
    returns: list[float] = []
    totals: list[float] = []
    gamma = config.ppo.gamma
    try:
        for seed in seeds:
            obs, info = env.reset(seed=seed)
            teacher.reset(obs, info)
            rewards: list[float] = []
            done = False
            while not done:
                action = int(teacher.act(obs, info))
                for key, value in obs.items():
                    obs_rows.setdefault(key, []).append(np.asarray(value, np.float32))
                actions.append(action)
                obs, reward, terminated, truncated, info = env.step(action)
                rewards.append(float(reward))
                done = terminated or truncated
            to_go, run = [], 0.0
            for r in reversed(rewards):
                run = r + gamma * run
                to_go.append(run)
            returns += to_go[::-1]
            totals.append(sum(rewards))
    finally:
        env.close()
    return {"teacher": name, "privileged": bool(getattr(teacher, "privileged", False)),
            "obs": {k: np.stack(v) for k, v in obs_rows.items()}, "actions": np.array(actions, np.int64),
            "returns": np.array(returns, np.float32), "teacher_return": float(np.mean(totals))}


def clone(model: Any, data: dict, config: TrainConfig) -> dict:
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
    generator = torch.Generator().manual_seed(config.seed)
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
    return {"teacher": data["teacher"], "teacher_privileged": data["privileged"], "episodes": options.episodes,
            "steps": int(n), "epochs": options.epochs, "agreement": float((chosen == actions).float().mean()),
            "teacher_mean_return": round(data["teacher_return"], 4)}
