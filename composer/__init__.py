"""rowcast's core: the animation model, hardware profiles, the wiring map and the electrical engine."""
__version__ = "0.1.0"
