"""Where the embedded fonts of the findings sheet live (shipped with the package)."""

from __future__ import annotations

from pathlib import Path

__all__ = ["FONT_DIR"]

#: Folder holding the embedded DejaVu fonts and their licence.
FONT_DIR: Path = Path(__file__).resolve().parent / "fonts"
