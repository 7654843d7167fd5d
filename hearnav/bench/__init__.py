"""The benchmark: the policy protocol and registry (runner, suites and statistics follow)."""

from hearnav.bench.policy import Policy, SB3Policy, as_policy, is_privileged
from hearnav.bench.registry import policy_names, register_policy, resolve

__all__ = ["Policy", "SB3Policy", "as_policy", "is_privileged", "policy_names", "register_policy", "resolve"]
