"""Matplotlib figures of results (no pyplot state): each function takes an optional Axes and returns it."""
