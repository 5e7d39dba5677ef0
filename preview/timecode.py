"""SMPTE-style timecode (non-drop frame) at the scene's frame rate."""

from __future__ import annotations


def timecode(seconds: float, frame_rate: int) -> str:
    """HH:MM:SS:FF for a time in seconds at a whole frame rate."""
    total_frames = int(round(max(seconds, 0.0) * frame_rate))
    frames = total_frames % frame_rate
    total_seconds = total_frames // frame_rate
    return f"{total_seconds // 3600:02d}:{total_seconds // 60 % 60:02d}:{total_seconds % 60:02d}:{frames:02d}"
