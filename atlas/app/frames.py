"""The app's frames: :class:`atlas.frames.Frame` (shared with the export), re-exported.

See :mod:`atlas.frames` for the arithmetic and its references.
"""

from __future__ import annotations

from atlas.frames import Frame, scale

__all__ = ["Frame", "scale"]
