"""The listening environment."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import gymnasium as gym
import numpy as np
from gymnasium import spaces

from hearnav.env.actions import ACTION_NAMES, Action, next_pose
from hearnav.env.config import EnvConfig, make_config
from hearnav.env.embodiment import Embodiment
from hearnav.env.episode import (
    EpisodePlan,
    check_categories,
    draw_episode,
    dry_signals,
)
from hearnav.env.features import ILD_DB, LEVEL_DB, FeatureExtractor, band_edges
from hearnav.env.gating import scored_windows, window_energies
from hearnav.env.odometry import visit_patch
from hearnav.env.privileged import PrivilegedView
from hearnav.env.scoring import SILENT_ENERGY, binaural_scores, window_scores
from hearnav.env.standoff import StandoffMoves, ring_cells
from hearnav.env.worlds import World, get_maps, get_world, scene_list
from hearnav.errors import ConfigError, HearnavError, did_you_mean, short_repr
from hearnav.listening import FADE_S, ListeningSession, Source, Window
from hearnav.separation import SeparationContext, get_separator
from hearnav.separation.stft import stft
from hearnav.tables.maps import patch_cells, patch_values

__all__ = ["ACTION_NAMES", "Action", "HearNavEnv", "Heard", "InvalidActionError", "RESET_OPTIONS", "SILENT_ENERGY",
           "check_reset_options", "scored_part"]

MAX_DISTANCE = 50.0
#: Windows the start may be delayed by while the target is silent.
MAX_LEAD_IN = 4


class InvalidActionError(HearnavError, ValueError):
    """An action outside the action space."""


#: Keys ``reset(options=...)`` accepts: none; every option is given when the environment is made.
RESET_OPTIONS: tuple[str, ...] = ()


def check_reset_options(options: object) -> None:
    """Raise ConfigError for anything ``reset(options=...)`` would otherwise ignore: every key is unknown
    (:data:`RESET_OPTIONS`), and an environment option given there is pointed to the constructor."""
    if options is None:
        return
    if not isinstance(options, dict):
        raise ConfigError(f"reset(options=...) expected a dict or None, got {type(options).__name__}; "
                          f"pass options=None")
    for key in options:
        if key in RESET_OPTIONS:
            continue
        valid = f"one of {', '.join(RESET_OPTIONS)}" if RESET_OPTIONS else "no keys: reset takes no options"
        found = f"reset(options=...) got the unknown key {short_repr(key)} (expected {valid})"
        fields = list(EnvConfig.model_fields)
        if key in fields:
            raise ConfigError(f"{found}; {key!r} is an environment option: make the environment with "
                              f"HearNavEnv({key}=...) instead")
        close = did_you_mean(str(key), fields) if isinstance(key, str) else ""
        if close.startswith("did you mean"):
            raise ConfigError(f"{found}; environment options are given when making it ({close})")
        raise ConfigError(f"{found}; drop it (environment options are given when making the environment: "
                          f"{', '.join(fields)})")


def scored_part(window: Window, fade: int) -> Window:
    """The part of a window that is scored: after the cross-fade from the previous pose.

    Scoring only what follows the cross-fade makes a pose's score at a time independent of where the
    listener came from, so look-ahead scores and the oracle bound are exact.
    """
    return window.part(fade)


def _scores(reference: np.ndarray, *estimates: np.ndarray) -> list[float | None]:
    """Score in dB of each (finite, (2, m)) estimate against a (2, m) reference (:func:`binaural_scores`), or
    None for each when an ear of the reference is silent."""
    scores = binaural_scores(reference, *estimates)
    return [None] * len(estimates) if scores is None else scores


@dataclass(frozen=True)
class Heard:
    """The last window heard: the whole window (its cross-fade included), its scored part and the separator's
    (2, m) estimate of the target at each ear over that part."""

    window: Window
    scored: Window
    estimate: np.ndarray


class HearNavEnv(gym.Env):
    """A two-eared listener moves over a floorplan so that a separator can pull out one target sound.

    Each episode places a target sound and 1-3 distractors at named spots of a scene; the sources play
    continuously. Every step the listener acts, then hears the next ``step_s`` seconds at its new pose. The
    built-in separator (``separator``, steered at the direction the target's earliest path arrives from: the spot's
    in line of sight, a reflection's when the straight line is blocked) estimates the target at
    each ear from the binaural mixture. The score is the mean over the two ears of the SI-SDR (Le Roux et al.,
    2019) of that ear's estimate against that ear's early image of the target (its image through the response
    cut 50 ms after the first arrival, the C50 split of ISO 3382-1; :mod:`hearnav.acoustics.early`), and the
    reward is the change of the score.

    ## Action space
    ``Discrete(4)``, the values of :class:`hearnav.env.actions.Action`:

    | action | meaning |
    |---|---|
    | 0 | forward one cell along the heading (a move into a wall or into the stand-off ring keeps the pose; info["collided"] is True) |
    | 1 | turn left by one heading step (90 degrees with 4 headings, 45 with 8) |
    | 2 | turn right by one heading step |
    | 3 | stay |

    ## Observation space
    ``Dict`` of float32 ``Box`` es with finite bounds (S = n_segments time segments, B = n_bands log-spaced
    bands from 100 Hz to fs/2, P = patch_size):

    | key | shape | content | bounds |
    |---|---|---|---|
    | binaural | (5, S, B) | left level dB, right level dB, ILD dB, cos IPD, sin IPD of the current window after its cross-fade | [-120, 40], [-60, 60], [-1, 1] |
    | estimate | (2, S, B) | level dB of the separator's current estimate at the left and right ear | [-120, 40] |

    Levels are Welch band levels (``hearnav.env.features``): sqrt-Hann frames of 512 samples every 256 samples
    (every other frame of the separator's STFT, which the step computes once), averaged over each of the S
    equal segments and summed over each band's bins. IPDs are the angles of the band-summed cross-spectra. The
    estimate's levels come from the separator's output spectrum when it synthesised the estimate through
    ``SeparationContext.synthesise`` (every built-in does), else from the STFT of the returned estimate.
    | map | (2, P, P) | egocentric map, row 0 ahead, column 0 left: 1 = cannot be entered (not navigable, or in the stand-off ring); 1 = a source in line of sight inside the field of view ``fov_deg`` | [0, 1] |
    | visits | (P, P) | the listener's own visits this episode, from odometry, in the map's layout: steps spent in each cell (the start counts as one, turns and stays count) / 4, capped at 1; 0 off the floor (:mod:`hearnav.env.odometry`) | [0, 1] |
    | target | (3,) | the target cue (``target_cue``, below): distance (m), sin and cos of a bearing relative to the heading (counter-clockwise) | [0, 50], [-1, 1] |
    | budget | (1,) | fraction of the step budget left | [0, 1] |

    ``hearnav.env.FlatObservation`` flattens the dictionary into one vector.

    What ``target`` tells about the target (``target_cue``; the keys, shapes and bounds are the same for
    every cue, and entries a cue does not give are 0):

    | target_cue | distance | bearing |
    |---|---|---|
    | ``bearing`` (default) | 0 | of the target's earliest arriving path, as a direction-of-arrival tracker would give it: the spot's own bearing in line of sight; when a wall blocks the straight line, the direction the earliest reflection arrives from (through a doorway it points towards the doorway). It is the direction the separator steers at (``PoseTables.arrival``) |
    | ``none`` | 0 | sin = cos = 0 |
    | ``position`` (easier) | to the target spot, capped at 50 m | of the target spot, as a straight line |

    The map never tells the target from the distractors: its source channel marks every source alike and
    every source has a ring, whatever the cue.

    ## Reward
    The paired reward ``S(pose_t, w_t) - S(pose_t-1, w_t)`` in dB: the separator's score on the window just
    heard at the new pose minus its score on the same window at the previous pose, so the reward is the change
    the move itself makes, measured on the same sound. The step renders the previous pose's window as well (a
    second render; none when the pose did not change). Staying, turning into a wall's blocked move or a
    collision earns exactly 0, and so does a window that is not scored. A window is scored after its first
    20 ms, the cross-fade from the previous pose, so a pose's score at a given time does not depend on the path
    to it. The rewards of an episode sum the moves' effects, each on its own window; they do not sum to the
    final minus the starting score (that difference mostly follows the sound's content). ``reward_clip`` clips
    each reward to +/- that many dB.

    ## Episode end
    Never terminated; truncated after ``budget`` steps.

    ## Stand-off ring
    Cells whose centre is closer than ``standoff_m`` (default 1 m) to the spot of any source of the episode
    (target or distractor) cannot be entered: a robot does not walk into a person, and the far-field head model
    of the responses holds. A forward move into the ring keeps the pose and counts as a collision, the map shows
    the ring's cells as not navigable, and the start cell lies outside every ring
    (:mod:`hearnav.env.standoff`). ``privileged.next_pose`` and the oracle bound move the same way.

    ## Info
    At reset, ``embodiment`` (:class:`hearnav.env.embodiment.Embodiment`: sampling rate, window, headings, head
    radius, speed of sound, band edges, STFT; also ``env.unwrapped.embodiment``). At reset and every step,
    ``si_sdr_db`` (the separator's score against the early image at each ear), ``full_si_sdr_db`` (its
    separation-only score against the full reverberant image at each ear), ``input_si_sdr_db`` and
    ``input_full_si_sdr_db`` (the unprocessed mixture at each ear against the same references: the input
    reference), ``pose`` (cell, x, y, heading index and degrees), ``collided``, ``target_active``, ``step``,
    ``scene`` and ``sources`` (role, spot, category, pool, voice, take, offset, level). No wall-clock values.
    ``before_si_sdr_db`` is the score of the window just heard at the previous pose (None after reset, after a
    step that did not change the pose and in a window that is not scored). A window is not scored when the
    target is silent in it (an alarm's pause) or quiet, more than 20 dB below its episode's median window
    (:mod:`hearnav.env.gating`): ``target_active`` is False, all scores keep their previous values and the reward
    is 0; ``quiet_windows`` counts such windows since reset. An episode whose target starts silent or quiet
    begins with the first scored window (at most 4 windows later).

    ## Privileged access
    ``env.unwrapped.privileged`` (:class:`hearnav.env.privileged.PrivilegedView`) answers what no agent
    observes, for reference policies and the oracle bound: for example the separator's score at any pose for the
    window the next step will hear. It is not part of the observation.

    ## Arguments
    ``HearNavEnv(config=None, render_mode=None, **options)``: ``config`` is a YAML path, a bundled name in
    configs/env/ (e.g. "default") or a dict; keyword options override it. Options (see
    :class:`hearnav.env.config.EnvConfig`): ``scenes`` (a split, "procedural", or a list of names),
    ``procedural_pool``, ``target_category`` (a category or a list), ``distractors`` ([min, max]), ``sound_pool`` ("seen" or
    "unseen"), ``distractor_level_db`` ([low, high] relative to the target), ``target_cue`` ("bearing", "none" or
    "position"), ``standoff_m`` (m, 0 to 5), ``min_start_distance`` (m), ``step_s``, ``budget``, ``eval_windows``
    (windows after the episode on which the benchmark scores its end and start poses), ``separator``,
    ``reward_clip``, ``n_bands``, ``n_segments``, ``patch_size``,
    ``fov_deg`` and ``acoustics`` (:class:`hearnav.acoustics.AcousticSettings` fields). Unknown options and
    out-of-range values raise :class:`hearnav.errors.ConfigError`, and so does any key of ``reset(options=...)``
    (reset takes no options), a ``standoff_m`` that leaves no navigable cell outside the rings of a scene's
    spots, and a ``min_start_distance`` that no navigable cell outside those rings meets for some target spot
    of a scene (at the first reset there, naming the largest distance that scene allows; the start is drawn
    from the start region, else from every navigable cell, outside the episode's rings). ``render_mode="rgb_array"`` draws the plan,
    the target (red) and distractors (grey), the listener's pose and its path.
    """

    metadata = {"render_modes": ["rgb_array"], "render_fps": 2}

    def __init__(self, config: Any = None, render_mode: str | None = None, **options: Any):
        self.config: EnvConfig = make_config(config, **options)
        if render_mode not in (None, "rgb_array"):
            raise ConfigError(f"render_mode must be None or 'rgb_array' (got {render_mode!r})")
        self.render_mode = render_mode
        cfg = self.config
        check_categories(cfg)
        self.separator = get_separator(cfg.separator)
        self.scene_names = scene_list(cfg.scenes, cfg.procedural_pool)
        self.fs = cfg.acoustics.fs
        self.window_len = int(round(cfg.step_s * self.fs))
        self._fade = int(round(FADE_S * self.fs))
        self._stft = (SeparationContext.n_fft, SeparationContext.hop)
        self.embodiment = Embodiment(fs=self.fs, window_len=self.window_len, fade_len=self._fade,
                                     n_headings=cfg.acoustics.n_headings, head_radius=cfg.acoustics.head_radius,
                                     speed_of_sound=cfg.acoustics.speed_of_sound,
                                     band_edges=tuple(band_edges(self.fs, cfg.n_bands).tolist()), n_fft=self._stft[0],
                                     hop=self._stft[1])
        self.features = FeatureExtractor(self.fs, self.window_len - self._fade, cfg.n_bands, cfg.n_segments,
                                         *self._stft)
        seg, bands = self.features.shape
        lo, hi = LEVEL_DB
        level = lambda n: spaces.Box(lo, hi, (n, seg, bands), np.float32)  # noqa: E731
        binaural_lo = np.array([lo, lo, ILD_DB[0], -1, -1], np.float32)[:, None, None] * np.ones((1, seg, bands), np.float32)
        binaural_hi = np.array([hi, hi, ILD_DB[1], 1, 1], np.float32)[:, None, None] * np.ones((1, seg, bands), np.float32)
        self.observation_space = spaces.Dict({
            "binaural": spaces.Box(binaural_lo, binaural_hi, dtype=np.float32),
            "estimate": level(2),
            "map": spaces.Box(0.0, 1.0, (2, cfg.patch_size, cfg.patch_size), np.float32),
            "visits": spaces.Box(0.0, 1.0, (cfg.patch_size, cfg.patch_size), np.float32),
            "target": spaces.Box(np.array([0, -1, -1], np.float32), np.array([MAX_DISTANCE, 1, 1], np.float32),
                                 dtype=np.float32),
            "budget": spaces.Box(0.0, 1.0, (1,), np.float32),
        })
        self.action_space = spaces.Discrete(4)
        self.world: World | None = None
        self.plan: EpisodePlan | None = None
        self._session: ListeningSession | None = None
        self._path: list[tuple[int, int]] = []
        self._fov = float(np.deg2rad(cfg.fov_deg))

    def preload(self) -> None:
        """Open every scene's tables and maps now (building them if they are not cached), as the first episode in
        each scene otherwise does: a trainer or a timing pays the once-per-process cost up front."""
        for name in self.scene_names:
            get_world(name, self.config.acoustics, self.window_len)
            get_maps(name, self.config.acoustics, self.config.patch_size, self._fov)

    # -- episode -----------------------------------------------------------------------------------------------

    def reset(self, *, seed: int | None = None, options: dict | None = None):
        check_reset_options(options)
        super().reset(seed=seed)
        rng = self.np_random
        name = self.scene_names[int(rng.integers(len(self.scene_names)))]
        self.world = get_world(name, self.config.acoustics, self.window_len)
        self.plan = draw_episode(rng, self.config, name, self.world.scene, self.world.grid)
        obs, info = self._begin()
        return obs, {**info, "embodiment": self.embodiment}

    def start_plan(self, plan: EpisodePlan):
        """Start an episode from a given plan (its scene must be the current world's), as reset does from a drawn
        one: for tools that score a chosen arrangement (``hearnav score-map``). Returns (obs, info)."""
        if self.world is None or plan.scene != self.plan.scene:
            raise ConfigError(f"start_plan expected a plan on the current scene "
                              f"({None if self.plan is None else self.plan.scene!r}), got {plan.scene!r}; reset first")
        self.plan = plan
        return self._begin()

    def _begin(self):
        world, plan = self.world, self.plan
        n_windows = self.config.budget + 1 + MAX_LEAD_IN + self.config.eval_windows
        signals = dry_signals(plan, world.listening.signal_length(n_windows), self.fs)
        sources = [Source(p.spot, x) for p, x in zip(plan.sources, signals)]
        self._session = ListeningSession(world.listening, sources, target=0)
        self._scored = scored_windows(window_energies(signals[0], world.listening.warmup, self.window_len,
                                                      self._fade, n_windows))
        self.cell, self.heading = plan.start_cell, plan.start_heading
        self.steps = 0
        self._path = [(self.cell, self.heading)]
        self._steps_in = np.zeros(world.grid.n_cells, np.float32)  # steps in each cell: _path counted as it grows
        self._steps_in[self.cell] = 1.0
        self._spot_ids = [p.spot for p in plan.sources]
        self._poses = world.poses  # the scene's tables, memory-mapped from the store
        self._maps = get_maps(plan.scene, self.config.acoustics, self.config.patch_size, self._fov)
        self._source_info = [p.info(world.scene) for p in plan.sources]
        spots_xy = np.array([world.scene.spots[s].position[:2] for s in self._spot_ids])
        self.moves = StandoffMoves(world.grid, ring_cells(world.grid, spots_xy, self.config.standoff_m))
        self.si_sdr_db = self.before_si_sdr_db = None
        self.quiet_windows = 0
        for _ in range(MAX_LEAD_IN + 1):  # a target that starts in a pause: listen on until it sounds
            self._hear(collided=False)
            if self.target_active:
                break
        self.quiet_windows = 0  # counted from the first scored window on
        if self.si_sdr_db is None:
            raise ConfigError(f"the target ({plan.sources[0].category}) is silent or quiet for {MAX_LEAD_IN + 1} windows "
                              f"(expected a sounding target); use longer step_s or another category")
        return self._obs(), self._info()

    def step(self, action):
        if self._session is None:
            raise ConfigError("call reset() before step() (expected a started episode, got none)")
        if self.steps >= self.config.budget:
            raise ConfigError(f"the episode was truncated after its budget of {self.config.budget} steps (expected "
                              f"a step within the budget); call reset() to start the next episode")
        if isinstance(action, (bool, np.bool_)) or not isinstance(action, (int, np.integer)) or \
                not 0 <= int(action) < 4:
            if isinstance(action, np.ndarray) and action.shape in ((), (1,)) and np.issubdtype(action.dtype, np.integer):
                return self.step(int(action.reshape(-1)[0]))
            raise InvalidActionError(f"action must be an integer in [0, 3] ({', '.join(ACTION_NAMES)}), "
                                     f"got {action!r}")
        before = (self.cell, self.heading)
        self.cell, self.heading, collided = next_pose(self.moves, self.cell, self.heading, int(action))
        moved = (self.cell, self.heading) != before
        # the previous pose on the window about to be heard: the paired reward's second render (none when still)
        self.before_si_sdr_db = self.score_window(self.peek(*before), *before)[1] if moved else None
        self.steps += 1
        self._path.append((self.cell, self.heading))
        self._steps_in[self.cell] += 1.0
        self._hear(collided)
        reward = 0.0
        if moved and self.target_active and self.before_si_sdr_db is not None:
            reward = self.si_sdr_db - self.before_si_sdr_db
        if self.config.reward_clip is not None:
            reward = float(np.clip(reward, -self.config.reward_clip, self.config.reward_clip))
        truncated = self.steps >= self.config.budget
        return self._obs(), float(reward), False, bool(truncated), self._info()

    def _hear(self, collided: bool) -> None:
        """Listen to the next window; a window that is not scored (the target silent or quiet) keeps the previous
        scores."""
        scored_now = self._scored_at(self._session.time)
        window = self._session.listen(self.cell, self.heading)
        self.collided = collided
        scored = scored_part(window, self._fade)
        self._spec = stft(scored.mixture, *self._stft)  # shared by the separator and the features
        self._spec.flags.writeable = False
        ctx = self.context(self.cell, self.heading, scored, known_stft=(scored.mixture, self._spec))
        estimate = self.separator(scored.mixture, ctx, trusted=True)
        self._heard = Heard(window, scored, estimate)
        self._estimate_spec = ctx.spectrum_of(estimate)
        scores = window_scores(estimate, scored.mixture, scored.early, scored.target_image) if scored_now else None
        self.target_active = scores is not None
        self.quiet_windows += int(not self.target_active)
        if scores is not None:
            self.si_sdr_db, self.full_si_sdr_db, self.input_si_sdr_db, self.input_full_si_sdr_db = scores

    # -- separation ----------------------------------------------------------------------------------------------

    def target_bearing(self, cell: int, heading: int) -> tuple[float, float]:
        """Distance (m) and bearing (radians in [-pi, pi), counter-clockwise from the heading) of the target spot."""
        spot = self._spot_ids[0]
        return float(self._poses.distance[cell, spot]), float(self._poses.bearing[cell, heading, spot])

    def context(self, cell: int, heading: int, window: Window | None = None,
                known_stft: tuple[np.ndarray, np.ndarray] | None = None) -> SeparationContext:
        """The separator's side information at a pose: the bearing the target's earliest path arrives from (its
        spot's bearing in line of sight; a reflection's when the straight line is blocked) with the delay-and-sum
        weights towards it, and the target's early image only for privileged separators."""
        image = window.early if (window is not None and self.separator.privileged) else None
        spot, poses = self._spot_ids[0], self._poses
        return SeparationContext(fs=self.fs, azimuth=float(poses.arrival[cell, heading, spot]), target_image=image,
                                 known_stft=known_stft, das=poses.das[cell, heading, spot],
                                 radius=self.config.acoustics.head_radius, c=self.config.acoustics.speed_of_sound)

    def score_window(self, window: Window, cell: int, heading: int,
                     ctx: SeparationContext | None = None) -> tuple[np.ndarray, float | None]:
        """The separator's (2, m) estimate of the target in a window heard at a pose, and its score in dB.

        The score is None when the window is not scored: the target is silent in it (its early image has no
        energy) or quiet (:mod:`hearnav.env.gating`).
        """
        window = scored_part(window, self._fade)
        estimate, score = self._score_scored(window, ctx or self.context(cell, heading, window))
        return estimate, score if self._scored_at(window.start - self._fade) else None

    def _scored_at(self, time: int) -> bool:
        """Whether the window starting at sample ``time`` is scored (not quiet, :mod:`hearnav.env.gating`)."""
        k = (time - self.world.listening.warmup) // self.window_len
        return 0 <= k < len(self._scored) and bool(self._scored[k])

    def scores_ahead(self, poses: list[tuple[int, int]], n_windows: int, offset: int = 0) -> np.ndarray:
        """Scores (dB) of poses on the ``n_windows`` windows that start ``offset`` windows after the one the next
        step will hear; nothing moves or advances (privileged: the benchmark's end-of-episode scores and the
        oracle bound reach it).

        Returns
        -------
        (n_windows, len(poses)) float64; NaN in a window that is not scored.
        """
        session = self._session.fork(offset)
        out = np.full((n_windows, len(poses)), np.nan)
        for k in range(n_windows):
            if self._scored_at(session.time):
                for j, (cell, heading) in enumerate(poses):
                    window = scored_part(session.peek(cell, heading), self._fade)
                    score = self._score_scored(window, self.context(cell, heading, window))[1]
                    out[k, j] = np.nan if score is None else score
            session.advance()
        return out

    def _score_scored(self, window: Window, ctx: SeparationContext) -> tuple[np.ndarray, float | None]:
        """:meth:`score_window` of a window already cut to its scored part."""
        estimate = self.separator(window.mixture, ctx, trusted=True)  # our own finite mixture and context
        return estimate, _scores(window.early, estimate)[0]

    def peek(self, cell: int, heading: int) -> Window:
        """The window the next step will hear, as heard at any pose (no cross-fade; nothing moves or advances).

        Privileged: reference policies reach it through :attr:`privileged`.
        """
        return self._session.peek(cell, heading)

    @property
    def sources(self) -> list[Source]:
        """The episode's sources, the target first: spots and dry signals (privileged)."""
        return list(self._session.sources)

    @property
    def heard(self) -> Heard:
        """The last window heard and the separator's estimate over its scored part (privileged)."""
        return self._heard

    # -- observation -----------------------------------------------------------------------------------------

    def _obs(self) -> dict[str, np.ndarray]:
        if self._estimate_spec is not None:  # the separator synthesised through the context (every built-in)
            binaural, estimate = self.features.observe(self._spec, *self._estimate_spec)
        else:
            binaural = self.features.binaural(self._spec)
            estimate = np.concatenate([self.features.mono_signal(ear) for ear in self._heard.estimate])
        cells = patch_cells(self.world.grid, self.cell, self.heading, self.config.patch_size)  # map and visits share it
        return {
            "binaural": binaural,
            "estimate": estimate,
            "map": self._map(cells),
            "visits": visit_patch(self._steps_in, cells),
            "target": self._target_cue(),
            "budget": np.array([1.0 - self.steps / self.config.budget], np.float32),
        }

    def _target_cue(self) -> np.ndarray:
        """(3,) float32 ``obs["target"]`` at the current pose for the configured ``target_cue``: distance (m, only
        for "position"), sin and cos of the bearing ("bearing": of the target's earliest arriving path, the
        direction the separator steers at, :meth:`context`; "position": of the spot); zeros for "none"."""
        cue, spot = self.config.target_cue, self._spot_ids[0]
        if cue == "none":
            return np.zeros(3, np.float32)
        if cue == "position":
            dist, bearing = self.target_bearing(self.cell, self.heading)
            return np.array([min(dist, MAX_DISTANCE), math.sin(bearing), math.cos(bearing)], np.float32)
        bearing = float(self._poses.arrival[self.cell, self.heading, spot])
        return np.array([0.0, math.sin(bearing), math.cos(bearing)], np.float32)

    def _map(self, cells: np.ndarray) -> np.ndarray:
        """The egocentric map at the current pose (``cells``: its patch cells): the stand-off ring's cells are not
        navigable."""
        out = self._maps.patch(self.cell, self.heading, self._spot_ids)
        out[0][patch_values(cells, self.moves.blocked, False)] = 1.0
        return out

    def _info(self) -> dict[str, Any]:
        grid = self.world.grid
        x, y = grid.centres[self.cell].tolist()
        return {
            "si_sdr_db": float(self.si_sdr_db),
            "full_si_sdr_db": float(self.full_si_sdr_db),
            "input_si_sdr_db": float(self.input_si_sdr_db),
            "input_full_si_sdr_db": float(self.input_full_si_sdr_db),
            "pose": {"cell": int(self.cell), "x": x, "y": y, "heading": int(self.heading),
                     "heading_deg": math.degrees(grid.heading_angle(self.heading))},
            "collided": bool(self.collided),
            "target_active": bool(self.target_active),
            "before_si_sdr_db": None if self.before_si_sdr_db is None else float(self.before_si_sdr_db),
            "quiet_windows": int(self.quiet_windows),
            "step": int(self.steps),
            "scene": self.plan.scene,
            "sources": [dict(d) for d in self._source_info],
        }

    # -- privileged access and rendering ---------------------------------------------------------------------

    @property
    def privileged(self) -> PrivilegedView:
        """Privileged answers for reference policies (not part of the observation)."""
        return PrivilegedView(self)

    @property
    def path(self) -> list[tuple[int, int]]:
        """(cell, heading) poses visited this episode, the start included."""
        return list(self._path)

    def render(self):
        if self.render_mode != "rgb_array" or self.world is None:
            return None
        from hearnav.env.frames import draw_frame

        return draw_frame(self)
