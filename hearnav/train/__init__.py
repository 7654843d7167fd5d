"""Training a small agent with PPO (the ``train`` extra) and running it without torch.

Only :mod:`hearnav.train.trainer`, :mod:`hearnav.train.sb3` and :mod:`hearnav.train.export` import torch and
stable-baselines3, and only when called; :mod:`hearnav.train.config`, :mod:`hearnav.train.numpy_policy` and
:mod:`hearnav.train.agents` (the shipped agent) need numpy alone, so the base install can benchmark a trained
agent.
"""
