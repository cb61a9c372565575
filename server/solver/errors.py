"""The one exception the solver raises for input it cannot use."""


class SolverInputError(ValueError):
    """An input is physically impossible or ambiguous.

    ``parameter`` is the solver's name for the offending input (the same
    snake_case name the JSON API uses), so the web edge can point at the field.
    """

    def __init__(self, parameter: str, message: str):
        super().__init__(f"{parameter}: {message}")
        self.parameter = parameter
        self.message = message
