"""The package's exceptions: one root, a few specific kinds below it."""


class SitingError(ValueError):
    """Root of every error this package raises on purpose."""


class SiteFileError(SitingError):
    """A site file (or CAD drawing) that cannot be read or validated.

    ``problems`` holds one line per problem, each naming the file, the key path
    and what was expected.
    """

    def __init__(self, problems: list[str]):
        self.problems = list(problems)
        super().__init__("\n".join(self.problems))


class FitError(SitingError):
    """Input that no model can honour (e.g. isogauss extents that grow with the level)."""


class SolverError(SitingError):
    """A numerical solver that did not converge."""
