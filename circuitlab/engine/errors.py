"""The engine's one exception: a circuit or request it cannot compute, with a plain message."""


class EngineError(ValueError):
    """The engine cannot do what was asked (circuit has problems, nothing to train, bad name...).

    ``problems`` lists the individual reasons (for example the model's
    ``find_problems`` lines) when there are several.
    """

    def __init__(self, message: str, problems: list[str] | None = None):
        self.problems = list(problems or [])
        super().__init__(message)
