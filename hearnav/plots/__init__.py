"""Figures: floorplans, trajectories over score maps, per-episode gains, training curves (PNG and SVG, Agg)."""
