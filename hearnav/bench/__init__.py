"""The benchmark: the policy protocol and registry, and :func:`run`, which runs policies on a suite."""

from hearnav.bench.policy import Policy, SB3Policy, as_policy, is_privileged
from hearnav.bench.registry import load_policy, policy_names, register_policy
from hearnav.bench.results import EpisodeResult
from hearnav.bench.session import code_version, run


def __getattr__(name: str):
    if name in ("Summary", "summarise"):  # imported lazily: the statistics pull in scipy
        from hearnav.bench import stats

        return getattr(stats, name)
    raise AttributeError(f"module 'hearnav.bench' has no attribute {name!r}")


__all__ = ["EpisodeResult", "Policy", "SB3Policy", "Summary", "as_policy", "code_version", "is_privileged",
           "policy_names", "register_policy", "load_policy", "run", "summarise"]
