"""Shared pytest configuration."""

import os

import matplotlib

# Tests render figures off-screen; notebooks use the inline backend of their kernel instead.
matplotlib.use("Agg")
os.environ.setdefault("TQDM_DISABLE", "1")
