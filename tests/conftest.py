"""Shared test set-up: Qt offscreen before anything imports Qt; the sample registry."""
import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
