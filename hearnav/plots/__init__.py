"""Figures: floorplans, trajectories, per-episode gains."""
