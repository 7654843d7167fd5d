"""Physics below every stage: the spherical-head ear model, steering vectors, reverberation formulas, bearings.

Pure functions on numpy arrays, with no dependency on the rest of hearnav (nor on pyroomacoustics), so scene,
acoustics, separation and the environment can all import them.
"""
