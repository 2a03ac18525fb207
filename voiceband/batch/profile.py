"""Service-profile verdicts for batch rows (``--profile NAME``).

The profiles and their verdicts belong to :mod:`voiceband.profiles`; this module only turns them
into columns.  When that package is not part of this installation the option is refused with
one sentence before any work starts.
"""

from __future__ import annotations

from typing import Any

from ..errors import VoicebandError

__all__ = ["ProfileUnavailableError", "check_profile", "profile_column_types", "verdict_columns"]


class ProfileUnavailableError(VoicebandError, ValueError):
    """--profile was given but no service profiles are available."""


def _profiles():
    try:
        import voiceband.profiles as profiles  # noqa: PLC0415
    except ImportError:
        raise ProfileUnavailableError(
            "--profile needs the service profiles (voiceband.profiles), which this installation of "
            "voiceband does not have yet; run the batch without --profile."
        ) from None
    return profiles


def check_profile(name: str) -> None:
    """Raise :class:`ProfileUnavailableError` unless profile ``name`` can be used."""
    _profiles()
    raise ProfileUnavailableError(f"--profile {name}: service profiles are not wired into batch yet.")


def profile_column_types(name: str) -> tuple[tuple[str, str], ...]:
    """The verdict columns a profile adds to each row, with their types."""
    check_profile(name)
    return ()


def verdict_columns(name: str, result: Any) -> dict[str, Any]:
    """The verdict columns of one analysed file under profile ``name``."""
    check_profile(name)
    return {}
