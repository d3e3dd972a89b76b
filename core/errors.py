"""Errors that reach users: each says what went wrong and where."""


class SkyloomError(Exception):
    """Base class for every error Skyloom reports to a user (CLI prints it without a traceback)."""


class SceneError(SkyloomError):
    """A scene file is malformed or inconsistent.

    ``problems`` holds one ``(location, reason)`` pair per problem; ``location`` names the file and
    the field path (``meadow.json: formations[2].points[17]``).
    """

    def __init__(self, problems: list[tuple[str, str]]):
        self.problems = list(problems)
        lines = [f"{where}: {why}" for where, why in self.problems]
        super().__init__("invalid scene:\n  " + "\n  ".join(lines))


class PlanningError(SkyloomError):
    """A stage could not produce a plan (infeasible timing, unresolved conflict, solver failure)."""


class ExportError(SkyloomError):
    """An export folder could not be written or read."""


class Cancelled(SkyloomError):
    """The user cancelled a running stage."""
