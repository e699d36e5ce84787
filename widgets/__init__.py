"""rankfold.widgets: the notebook explorer and its Altair views."""

from .explorer import SECTIONS, Explorer, explore

__all__ = ["Explorer", "SECTIONS", "explore"]
