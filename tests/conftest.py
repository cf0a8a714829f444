"""Test-wide settings: Qt draws offscreen (no display on CI machines)."""

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
