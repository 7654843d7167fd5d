"""Acoustics: scene -> room -> binaural responses (early image sources + ray-traced tail) -> cache."""

from hearnav.acoustics.cache import cache_dir, cache_path, load_or_build
from hearnav.acoustics.responses import Responses, build_responses
from hearnav.acoustics.settings import RESPONSE_LEAD, AcousticSettings

__all__ = ["RESPONSE_LEAD", "AcousticSettings", "Responses", "build_responses", "cache_dir", "cache_path", "load_or_build"]
