"""Test set-up shared by the whole tree: Qt runs offscreen, never on a real screen."""

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
