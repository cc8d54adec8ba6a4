"""Shift products made from one Analysis: fronts export, arrivals, sections, shift, briefing, files, rerun."""
