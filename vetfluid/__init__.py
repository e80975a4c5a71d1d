"""vetfluid — the headless planning core.

Pure Python with numpy; never imports Qt or the ``ui`` package (a test and an
import-linter contract enforce it). Sub-packages follow the path a plan travels, each
importing only those below it (the ``layers`` contract in pyproject.toml):
``common`` → ``tables`` → ``physiology`` → ``planning`` → ``course`` → ``records`` →
``printouts``, with ``cli`` on top.
"""

__version__ = "0.1.0"
