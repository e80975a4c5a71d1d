"""vetfluid — the headless planning core.

Pure Python with numpy; never imports Qt or the ``ui`` package (a test and an
import-linter contract enforce it). Modules are named for the concept they hold:
``species`` (the sourced table), ``fluids``, ``hydration``, ``maintenance``,
``resuscitation``, ``electrolytes``, ``delivery``, ``plan`` and ``cli``.
"""

__version__ = "0.1.0"
