"""The one exception the solver raises for input it cannot use."""


class SolverInputError(ValueError):
    """An input is physically impossible or ambiguous.

    ``parameter`` is the dotted path of the offending input relative to the object that
    raised it ("flow" from a feed mode, "end.flow" from a whole-cycle solve). An object that
    builds or holds another re-raises its errors with its own prefix (:meth:`within`), so two
    inputs called "pressure" in different objects never collide: the web edge maps the full
    path to a field of the request.
    """

    def __init__(self, parameter: str, message: str, also: tuple[str, ...] = ()):
        super().__init__(f"{parameter}: {message}")
        self.parameter = parameter
        self.message = message
        #: other inputs the same message concerns (a combination no input alone is wrong in)
        self.also = tuple(also)

    @property
    def parameters(self) -> tuple[str, ...]:
        return (self.parameter, *self.also)

    def within(self, prefix: str) -> "SolverInputError":
        """The same error, its paths prefixed by where the raising object sits."""
        def put(p):
            return f"{prefix}.{p}" if prefix else p
        return SolverInputError(put(self.parameter), self.message, tuple(put(p) for p in self.also))


class inputs_of:  # noqa: N801 (used as a function: ``with inputs_of("feed"):``)
    """Errors raised in the block concern inputs under ``prefix`` (e.g. building the feed).

    A plain class rather than a generator context manager: a scenario passes through some
    dozen of these, and entering a class's block costs a fraction of a generator's (issue 12).

    >>> try:
    ...     with inputs_of("feed"):
    ...         raise SolverInputError("pressure", "must be > 0 Pa")
    ... except SolverInputError as exc:
    ...     print(exc.parameter)
    feed.pressure
    """

    __slots__ = ("prefix",)

    def __init__(self, prefix: str):
        self.prefix = prefix

    def __enter__(self):
        return None

    def __exit__(self, kind, exc, tb):
        if kind is not None and issubclass(kind, SolverInputError):
            raise exc.within(self.prefix) from None
        return False


def in_bar(pressure: float) -> str:
    """A pressure for a message: in bar, as pumps and presses are rated, with Pa beside."""
    return f"{pressure / 1e5:.4g} bar ({pressure:.6g} Pa)"


def in_m3h(flow: float) -> str:
    """A flow for a message: in m³/h, as pumps are rated, with m³/s beside."""
    return f"{flow * 3600:.4g} m³/h ({flow:.6g} m³/s)"
