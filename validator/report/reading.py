"""What a characteristic's sentences and figures need to know besides its results.json entry."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Reading"]


@dataclass(frozen=True)
class Reading:
    """The study's alpha and concentration unit, for a presentation module's sentences and figures."""

    alpha: float
    unit: str
