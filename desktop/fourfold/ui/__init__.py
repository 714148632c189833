"""The window: Qt widgets over the Qt-free plan document (see DEVELOPERS.md, *Layout*).

The plan (with numpy and scipy.special under it) is imported here, before any module of this
package imports PySide6: PySide6's import hook reads the source of every module imported after
it, looking for its feature switches, which cost the window's start-up about 20 ms when
numpy, scipy and the plan came after it.
"""

import fourfold.plan  # noqa: F401  (before PySide6; see above)
