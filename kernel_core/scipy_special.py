"""``scipy.special`` imported on first use: it takes about half of ``import rankfold``'s time.

Modules write ``from .scipy_special import special`` and call ``special.ndtr(...)`` as they
would with scipy's module; the first call imports scipy.special and keeps each function found.
"""

from __future__ import annotations

from typing import Any

__all__ = ["special"]


class _OnFirstUse:
    """Stands for ``scipy.special``; a function looked up once is kept on the instance."""

    def __getattr__(self, name: str) -> Any:
        from scipy import special as module

        value = getattr(module, name)
        setattr(self, name, value)
        return value


special = _OnFirstUse()
