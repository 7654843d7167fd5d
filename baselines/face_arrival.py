"""The ``face-arrival`` baseline: turn to face the direction the sound arrives from, then hold still.

It hears only the binaural band features (``observation["binaural"]``: ILD and cos/sin IPD per band);
it never reads the target's bearing, the map or anything privileged. The raw ear signals are not observed,
so a GCC-PHAT delay cannot be computed; instead the arrival is found by matching interaural cues:

1. **Cue model.** For every candidate azimuth on a 1-degree circle, the spherical-head steering vector
   (``hearnav.separation.steering_vector``: Woodworth delays and a head shadow) predicts each band's IPD
   (the angle of the band-summed cross-spectrum L R*, flat spectrum assumed) and ILD.
2. **Matching.** The observed IPD phasors are averaged over the time segments, weighted by the segments'
   power; the match of an azimuth is the cosine of the IPD error summed over bands below 1.5 kHz (where a
   head's phase is nearly unambiguous), each band weighted by its coherence and by its level (bands 30 dB or
   more below the loudest get no weight: other sounds own them), minus a small penalty on the ILD error (dB).
3. **Front/back.** A spherical head hears az and 180 - az alike, so the policy keeps the best frontal
   azimuth a and turns left once. The source is then at a - step (front) or 180 - a - step (back); the
   hypothesis that matches the new observation better wins.
4. **Facing.** The policy turns the number of heading steps that brings the resolved azimuth nearest to
   straight ahead, then stays for the rest of the episode. It faces the dominant sound: with loud
   distractors or strong reverberation that need not be the target.

The embodiment (sampling rate, band edges, head radius, speed of sound and heading step) is the environment's
own, read from ``info["embodiment"]`` at reset (:class:`hearnav.env.Embodiment`). Deterministic.
"""

from __future__ import annotations

from itertools import pairwise

import numpy as np

import hearnav
from hearnav.env import Action, Embodiment
from hearnav.physics.geometry import wrap_angle as wrap
from hearnav.separation import steering_vector

CANDIDATES = np.deg2rad(np.arange(-180.0, 180.0, 1.0))  # candidate azimuths, counter-clockwise, 0 ahead


class CueModel:
    """Predicted per-band IPD phasors and ILDs of every candidate azimuth."""

    def __init__(self, body: Embodiment, per_band: int = 24, range_db: float = 30.0, ild_weight: float = 0.02):
        edges, n_bands = np.asarray(body.band_edges), body.n_bands
        freqs = np.concatenate([np.linspace(lo, hi, per_band, endpoint=False) for lo, hi in pairwise(edges)])
        d = steering_vector(CANDIDATES, freqs, body.head_radius, body.speed_of_sound)
        d = d.reshape(len(CANDIDATES), n_bands, per_band, 2)
        cross = (d[..., 0] * np.conj(d[..., 1])).sum(-1)  # (A, B) band-summed L R*
        self.ipd = cross / np.abs(cross)
        power = (np.abs(d) ** 2).sum(-2)  # (A, B, 2)
        self.ild = 10 * np.log10(power[..., 0] / power[..., 1])
        self.low = np.sqrt(edges[:-1] * edges[1:]) < 1500.0  # bands used for the IPD match
        self.range_db = range_db  # bands this far below the loudest one get no weight
        self.ild_weight = ild_weight  # dB^-2: the ILD only breaks near-ties of the IPD match

    def match(self, binaural: np.ndarray) -> np.ndarray:
        """(A,) match of each candidate azimuth to one observation (higher is better)."""
        power = 10 ** (binaural[0] / 10) + 10 ** (binaural[1] / 10)  # (S, B) segments where the sound is loud
        weight = power / np.maximum(power.sum(0), 1e-30)
        phasor = (weight * (binaural[3] + 1j * binaural[4])).sum(0)  # (B,) its |.| is the coherence
        level = 10 * np.log10(power.sum(0) + 1e-30)  # (B,) quiet bands belong to other sounds: trust them less
        trust = np.clip(1 + (level - level.max()) / self.range_db, 0, 1)
        ipd_term = (np.real(np.conj(self.ipd) * phasor) * self.low * trust).sum(-1)
        ild_obs = (weight * binaural[2]).sum(0)
        ild_term = (trust * (self.ild - ild_obs) ** 2).sum(-1) / max(trust.sum(), 1e-9)
        return ipd_term - self.ild_weight * ild_term


def score_at(match: np.ndarray, azimuth: float) -> float:
    """The match of the candidate nearest to ``azimuth``."""
    return float(match[int(np.argmin(np.abs(wrap(CANDIDATES - azimuth))))])


@hearnav.register_policy("face-arrival")
class FaceArrival:
    """Estimates the arrival azimuth from interaural cues, resolves front/back with one turn, faces it."""

    privileged = False

    def __init__(self) -> None:
        self.model: CueModel | None = None
        self.body: Embodiment | None = None
        self.first: float | None = None  # the frontal hypothesis before the turn
        self.turns: list[Action] = []  # the remaining turns towards the source
        self.resolved = False

    def reset(self, observation: dict, info: dict) -> None:
        body = info.get("embodiment")
        if not isinstance(body, Embodiment):
            raise hearnav.PolicyError(f"face-arrival needs info['embodiment'] at reset (expected an Embodiment, "
                                      f"got {type(body).__name__}); reset it with the info of HearNavEnv.reset")
        if body != self.body:
            self.body, self.model = body, CueModel(body)
        self.first, self.turns, self.resolved = None, [], False

    def act(self, observation: dict, info: dict) -> int:
        if self.model is None:
            raise hearnav.PolicyError("face-arrival acted before reset (expected reset(observation, info) first)")
        match = self.model.match(np.asarray(observation["binaural"], float))
        if self.first is None:  # step 1: the best frontal azimuth, then turn left to test it
            front = np.abs(CANDIDATES) <= np.pi / 2
            self.first = float(CANDIDATES[front][int(np.argmax(match[front]))])
            return Action.TURN_LEFT
        if not self.resolved:  # step 2: which hypothesis predicts what the turn changed
            self.resolved = True
            step = self.body.heading_step
            options = [float(wrap(h - step)) for h in (self.first, np.pi - self.first)]  # front, back
            azimuth = max(options, key=lambda a: score_at(match, a))
            k = int(np.round(azimuth / step))
            self.turns = [Action.TURN_LEFT if k > 0 else Action.TURN_RIGHT] * abs(k)
        return self.turns.pop(0) if self.turns else Action.STAY
