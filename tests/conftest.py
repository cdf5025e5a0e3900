"""Shared fixtures. Qt runs headless: the offscreen platform is set before Qt loads."""

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
