"""Mean score of every registered separator on the val scenes, on identical windows.

Each episode is drawn from a seed (numpy SeedSequence) and walked with a seeded random policy that does not
depend on the separator; at every window in which the target sounds, every separator separates the same scored
window and is scored as the environment scores (:mod:`hearnav.env.scoring`): the mean over the two ears of the
SI-SDR against the target's early image at that ear, and against its full image (separation only). Prints a
Markdown table: mean score, its 95 % bootstrap confidence interval over episodes, the gain over the unprocessed
mixture (the ``identity`` separator, the input reference) and the mean full-image score.

``--study`` adds three privileged bounds, not registered separators, that say where the attainable gain lies:
- ``study: 2-ear linear oracle``: per STFT bin and window, the two-ear linear filter w_e = R_x^-1 r_xe that
  minimises the squared error to ear e's early image (the multichannel Wiener solution, Doclo & Moonen 2002,
  with the true cross-covariances): the best any per-window linear two-ear filter can do;
- ``study: MVDR, true RTF and noise``: the binaural MVDR (Hadad et al. 2016) with the target's relative transfer
  function taken from the principal eigenvector of its true early image's covariance and the true covariance
  of everything else: the best a distortionless two-ear beamformer can do;
- ``study: known target spectrum``: each ear times a per-bin gain a S(f) / P_x(f), clipped to [0, 1], where S is
  the target early image's own normalised spectrum in the window and the level a the 5th percentile of
  P_x / S (a spectral-shape prior with an estimated level).
Usage: python benchmarks/separators_table.py [--split val] [--episodes 24] [--study]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's hearnav


def window_scores(env, names: list[str]) -> dict[str, tuple[float, float]] | None:
    """(score, full score) in dB of each separator on the window the environment heard last, or None when the
    target is silent in it. ``env`` must use a privileged separator, so its context carries the early image (the
    registry hides it from the others)."""
    from hearnav.env.scoring import binaural_scores

    scored = env.heard.scored
    ctx = env.context(env.cell, env.heading, scored)
    out = {}
    for name in names:
        estimate = _separate(name, scored.mixture, ctx)
        score, full = binaural_scores(scored.early, estimate), binaural_scores(scored.target_image, estimate)
        if score is None or full is None:
            return None
        out[name] = (score[0], full[0])
    return out


def _cov(spec: np.ndarray) -> np.ndarray:
    """(F, 2, 2) per-bin covariance of (2, F, T) spectra, double precision."""
    x = spec.astype(np.complex128)
    return np.einsum("ift,jft->fij", x, np.conj(x)) / x.shape[-1]


def _study_linear(mixture, ctx):
    x, e = ctx.stft(mixture).astype(np.complex128), ctx.stft(np.asarray(ctx.target_image, np.float32))
    r = _cov(x)
    r += (1e-6 * np.trace(r, axis1=1, axis2=2).real / 2 + 1e-20)[:, None, None] * np.eye(2)
    out = np.empty_like(x)
    for ear in (0, 1):
        cross = np.einsum("ift,ft->fi", x, np.conj(e[ear])) / x.shape[-1]
        w = np.linalg.solve(r, cross[..., None])[..., 0]
        out[ear] = np.einsum("fi,ift->ft", np.conj(w), x)
    return ctx.synthesise(out.astype(np.complex64), mixture.shape[1])


def _study_mvdr(mixture, ctx):
    from hearnav.separation.beamform import apply_weights, mvdr_weights

    x, e = ctx.stft(mixture), ctx.stft(np.asarray(ctx.target_image, np.float32))
    target = _cov(e)
    noise = _cov(x) - target
    d = np.linalg.eigh(target)[1][:, :, -1]
    out = np.empty_like(x)
    for ear in (0, 1):
        ref = d[:, ear:ear + 1]
        out[ear] = apply_weights(mvdr_weights(noise, d / np.where(np.abs(ref) > 1e-12, ref, 1.0)), x)
    return ctx.synthesise(out, mixture.shape[1])


def _study_spectrum(mixture, ctx):
    x, e = ctx.stft(mixture), ctx.stft(np.asarray(ctx.target_image, np.float32))
    out = np.empty_like(x)
    for ear in (0, 1):
        px, s = np.mean(np.abs(x[ear]) ** 2, -1), np.mean(np.abs(e[ear]) ** 2, -1)
        s = s / max(s.sum(), 1e-30)
        band = s > 1e-3 * s.max()
        level = np.percentile(px[band] / s[band], 5) if band.any() else 0.0
        out[ear] = x[ear] * np.clip(level * s / np.maximum(px, 1e-30), 0.0, 1.0)[:, None]
    return ctx.synthesise(out, mixture.shape[1])


STUDY = {"study: 2-ear linear oracle": _study_linear, "study: MVDR, true RTF and noise": _study_mvdr,
         "study: known target spectrum": _study_spectrum}


def _separate(name: str, mixture, ctx):
    from hearnav.separation import get_separator

    return STUDY[name](mixture, ctx) if name in STUDY else get_separator(name)(mixture, ctx)


def episode_means(env, names: list[str], seed: int) -> dict[str, tuple[float, float]]:
    """Mean (score, full score) of each separator over the sounding windows of one seeded random-walk episode."""
    rng = np.random.default_rng(seed)
    env.reset(seed=seed)
    rows = [window_scores(env, names)]
    truncated = False
    while not truncated:
        *_, truncated, _ = env.step(int(rng.integers(4)))
        rows.append(window_scores(env, names))
    rows = [r for r in rows if r is not None]
    return {name: tuple(np.mean([r[name] for r in rows], axis=0)) for name in names}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--split", default="val")
    parser.add_argument("--episodes", type=int, default=24)
    parser.add_argument("--study", action="store_true", help="add the three privileged bounds (see the docstring)")
    args = parser.parse_args()
    from scipy import stats

    from hearnav.env import HearNavEnv
    from hearnav.separation import get_separator, separator_names

    names = list(separator_names()) + (list(STUDY) if args.study else [])
    env = HearNavEnv(scenes=args.split, separator="oracle-mask")  # privileged: the context carries the early image
    seeds = [int(s.generate_state(1)[0]) for s in np.random.SeedSequence(2026).spawn(args.episodes)]
    per_episode = [episode_means(env, names, seed) for seed in seeds]
    score = {n: np.array([e[n][0] for e in per_episode]) for n in names}
    full = {n: np.array([e[n][1] for e in per_episode]) for n in names}
    print(f"{args.episodes} episodes on the {args.split} scenes, seeded random walk, "
          f"{env.config.budget + 1} windows each (those with the target sounding)")
    print("| separator | privileged | mean score (dB) | 95% CI | gain over the mixture (dB) | full-image score (dB) |")
    print("|---|---|---|---|---|---|")
    for name in sorted(names, key=lambda n: -score[n].mean()):
        ci = stats.bootstrap((score[name],), np.mean, confidence_level=0.95, random_state=0).confidence_interval
        gain = score[name].mean() - score["identity"].mean()
        print(f"| {name} | {'yes' if name in STUDY or get_separator(name).privileged else 'no'} | {score[name].mean():.2f} | "
              f"[{ci.low:.2f}, {ci.high:.2f}] | {gain:+.2f} | {full[name].mean():.2f} |")


if __name__ == "__main__":
    main()
