"""Rig calibration from a known line, and the instrument response."""
