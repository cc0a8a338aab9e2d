"""The project's exceptions, kept in one place.

``StudyError`` is for bad user input: the command line prints its message
(one line, no traceback) and exits with status 2.  ``SettingError`` is the
``StudyError`` of a library function's argument (a setting): it names the
setting, and the command line, which knows which option fills that
setting, says the option instead (:meth:`SettingError.for_option`).
``SimulationError`` is for a run that reached a state it cannot continue
from (for example a configuration inside the exp-6 core).
``ConvergenceError`` carries whatever partial result was reached.
"""

__all__ = ["StudyError", "SettingError", "SimulationError", "ConvergenceError"]


class StudyError(ValueError):
    """Bad user input: a setting, a value, a file.

    The message names the setting, the value, what is allowed and what to do.
    """


class SettingError(StudyError):
    """A bad value of a library setting (a function argument a user chooses).

    Parameters
    ----------
    setting : str
        The argument's name, as the library function spells it.
    value : object
        The value given.
    problem : str
        Why it is refused and what to do, as the rest of one sentence.

    Examples
    --------
    >>> err = SettingError("workers", 0, "must be at least 1")
    >>> str(err)
    "setting 'workers' = 0: must be at least 1"
    >>> str(err.for_option("--workers"))
    'option --workers = 0: must be at least 1'
    """

    def __init__(self, setting, value, problem):
        self.setting, self.value, self.problem = setting, value, problem
        super().__init__(self._text(f"setting '{setting}'"))

    def _text(self, name):
        value = self.value if isinstance(self.value, (int, float)) else repr(self.value)
        if self.value is None:
            return f"{name}: {self.problem}"
        return f"{name} = {value}: {self.problem}"

    def for_option(self, option):
        """The same error, naming the command-line option that gave the setting."""
        return StudyError(self._text(f"option {option}"))


class SimulationError(RuntimeError):
    """A simulation reached a state it cannot go on from."""


class ConvergenceError(RuntimeError):
    """An iterative solver stopped before converging.

    Parameters
    ----------
    message : str
        What did not converge and why.
    partial : object, optional
        The best result reached so far, for inspection.
    """

    def __init__(self, message, partial=None):
        super().__init__(message)
        self.partial = partial
