"""The project's own error types.

Every failure that a person can cause (a broken file, a street that cannot be
reached, a depot that is not a node) is raised as a subclass of
:class:`RoundsmanError` with a message written for the supervisor, naming the
file line, feature index or street at fault.  The command line prints the
message and exits non-zero; the window shows it and highlights the streets in
``segments``.
"""

from __future__ import annotations

from collections.abc import Iterable


class RoundsmanError(Exception):
    """Base class of every error the engine raises on purpose."""


class InputError(RoundsmanError):
    """A file could not be read as a street network.

    Parameters
    ----------
    message
        What is wrong, in words for people.
    source
        The file name (or other source label), if known.
    line
        1-based line number in the file, if known.
    feature
        0-based feature index (GeoJSON) or record index, if known.
    """

    def __init__(
        self,
        message: str,
        *,
        source: str | None = None,
        line: int | None = None,
        feature: int | None = None,
    ) -> None:
        self.source = source
        self.line = line
        self.feature = feature
        where = []
        if source:
            where.append(str(source))
        if line is not None:
            where.append(f"line {line}")
        if feature is not None:
            where.append(f"feature {feature}")
        prefix = ", ".join(where)
        super().__init__(f"{prefix}: {message}" if prefix else message)
        self.message = message


class UnknownFormatError(InputError):
    """The content of a file matches none of the formats Roundsman reads."""


class NetworkError(RoundsmanError):
    """The street network breaks a rule of the model (bad length, unknown node...).

    ``segments`` and ``nodes`` list the ids at fault so the window can
    highlight them.
    """

    def __init__(
        self,
        message: str,
        *,
        segments: Iterable[str] = (),
        nodes: Iterable[str] = (),
    ) -> None:
        super().__init__(message)
        self.message = message
        self.segments = tuple(segments)
        self.nodes = tuple(nodes)


class DepotError(NetworkError):
    """The depot is missing or is not a node of the network."""


class UnreachableError(NetworkError):
    """Streets that need service cannot be reached from the depot and back."""


class OneWayTrapError(UnreachableError):
    """Streets that can be entered but never left to return to the depot."""


class SolverError(RoundsmanError):
    """A solver failed for a reason that is not the user's input."""


class ActivityError(RoundsmanError):
    """An activity name or setting that is not valid; the message lists the choices."""


class FleetError(RoundsmanError):
    """Fleet settings that cannot be planned (bad capacity, unknown depot, a street
    heavier than a full load...); the message names the vehicle, node or street."""


class Cancelled(RoundsmanError):
    """A long computation was stopped on request."""


def describe_streets(ids: Iterable[str], names: dict[str, str], limit: int = 8) -> str:
    """Return a short human list of streets, e.g. ``"Mill Lane (s12), s13"``."""
    ids = list(ids)
    parts = []
    for sid in ids[:limit]:
        name = names.get(sid) or ""
        parts.append(f"{name} ({sid})" if name else sid)
    more = len(ids) - limit
    if more > 0:
        parts.append(f"and {more} more")
    return ", ".join(parts)
