"""Acoustic simulation settings. Every field but the thread count enters the cache key."""

from __future__ import annotations

import hashlib
import json

from pydantic import BaseModel, ConfigDict, Field, field_validator

#: Bumped whenever the response model changes in a way that invalidates cached files.
MODEL_VERSION = 6
#: Every response starts this many samples late, so that non-causal filter taps fit before the first path.
RESPONSE_LEAD = 32


class AcousticSettings(BaseModel):
    """How a scene is turned into binaural responses."""

    # strict and finite: numbers are YAML numbers (ints pass as floats), not "16000" or true; true/false for flags
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)

    fs: int = Field(default=16000, ge=8000, le=48000, description="sample rate in Hz")
    speed_of_sound: float = Field(default=343.0, ge=300.0, le=360.0, description="m/s (343 m/s: 20 C, dry air)")
    ism_order: int = Field(default=3, ge=0, le=4, description="image-source order of the early part")
    n_rays: int = Field(default=0, ge=0, le=200000, description="rays per source for the late tail; 0 = automatic")
    receiver_radius: float = Field(default=0.5, gt=0.05, le=1.5, description="ray-tracing receiver sphere, m")
    probe_spacing: float = Field(default=2.0, ge=0.5, le=10.0, description="distance between tail probes, m")
    hist_bin: float = Field(default=0.004, gt=0.0005, le=0.02, description="ray-tracing histogram bin, s")
    max_response_s: float = Field(default=2.0, ge=0.05, le=3.0,
                                  description="guard on response length, s (responses follow the decay)")
    decay_db: float = Field(default=60.0, ge=20.0, le=90.0, description="responses end this far below the peak")
    air_absorption: bool = False
    head_radius: float = Field(default=0.0875, ge=0.05, le=0.15, description="m")
    n_headings: int = Field(default=4, description="4 or 8 headings")
    seed: int = Field(default=0, ge=0, description="seeds the ray tracer and the tail noise")
    n_threads: int = Field(default=1, ge=1, le=64, description="pyroomacoustics threads")

    @field_validator("n_headings")
    @classmethod
    def _headings(cls, value: int) -> int:
        if value not in (4, 8):
            raise ValueError(f"n_headings must be 4 or 8 (got {value})")
        return value

    def key(self) -> str:
        """Stable hash of the settings that change results, with the model version."""
        payload = json.dumps({"model": MODEL_VERSION, **self.model_dump(exclude={"n_threads"})}, sort_keys=True)
        return hashlib.sha256(payload.encode()).hexdigest()[:16]
