"""Loads per time interval: logger files and typical load shapes."""
