"""``hearnav train``: train a PPO agent from a training config (needs the train extra)."""

from __future__ import annotations

import sys
from pathlib import Path


def register(sub) -> None:
    """Add the ``train`` subcommand."""
    p = sub.add_parser("train", help="train a PPO agent (needs the train extra)",
                       description="Train stable-baselines3 PPO on the environment of a training config. DIR gets "
                                   "train.json, checkpoints, best.zip (and best.npz for the numpy policy), eval.jsonl "
                                   "and logs; Ctrl-C saves a checkpoint, --resume continues from it.")
    p.add_argument("--config", required=True, help="a training YAML file or a bundled name (configs/train)")
    p.add_argument("--out", type=Path, required=True, metavar="DIR", help="training folder")
    p.add_argument("--seed", type=int, default=None, help="overrides the config's seed")
    p.add_argument("--workers", type=int, default=None, help="environment processes (overrides the config)")
    p.add_argument("--resume", action="store_true", help="continue the run in DIR from its last checkpoint")
    p.set_defaults(run=run)


def run(args) -> int:
    from hearnav.cli.paths import output_folder
    from hearnav.train.config import load_train_config
    from hearnav.train.sb3 import require_train_extra

    overrides = {k: v for k, v in (("seed", args.seed), ("workers", args.workers)) if v is not None}
    config = load_train_config(args.config, **overrides)
    output_folder(args.out)
    require_train_extra("hearnav train")
    from hearnav.train.trainer import train

    try:
        info = train(config, args.out, resume=args.resume)
    except KeyboardInterrupt:
        print(f"hearnav train: checkpoint saved in {args.out}; continue with --resume", file=sys.stderr)
        raise
    best = info.get("best") or {}
    print(f"trained {info['steps']} steps in {info['wall_time_s']:.0f} s; best mean gain_db "
          f"{best.get('mean_gain_db', float('nan')):+.3f} at step {best.get('step')} ({args.out / 'best.zip'})")
    return 0
