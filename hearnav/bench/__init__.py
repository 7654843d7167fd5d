"""The benchmark: the policy protocol and registry, and :func:`run`, which runs policies on a suite."""

from hearnav.bench.policy import Policy, SB3Policy, as_policy, is_privileged
from hearnav.bench.registry import policy_names, register_policy, resolve
from hearnav.bench.session import code_version, run

__all__ = ["Policy", "SB3Policy", "as_policy", "code_version", "is_privileged", "policy_names", "register_policy",
           "resolve", "run"]
