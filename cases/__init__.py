"""Bundled demo cases (YAML), shipped as package data."""
