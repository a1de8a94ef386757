"""Shared test set-up: Qt runs offscreen (no display needed)."""
import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
