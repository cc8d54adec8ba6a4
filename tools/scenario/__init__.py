"""The invented demo event generator (not installed): ``python -m tools.scenario``."""
