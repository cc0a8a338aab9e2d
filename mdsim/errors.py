"""The project's exceptions, kept in one place.

``StudyError`` is for bad user input: the command line prints its message
(one line, no traceback) and exits with status 2.  ``SimulationError`` is for
a run that reached a state it cannot continue from (for example a
configuration inside the exp-6 core).  ``ConvergenceError`` carries whatever
partial result was reached.
"""


class StudyError(ValueError):
    """Bad user input: a setting, a value, a file.

    The message names the setting, the value, what is allowed and what to do.
    """


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
