"""Exceptions raised by credence: one class per kind of failure, each carrying the
message the command line prints for the same failure."""


class CredenceError(Exception):
    """Any failure reported by credence."""


class InvalidInputError(CredenceError, ValueError):
    """The data, the options or a net file are wrong (the command line's exit code 2)."""


class CorruptRunError(CredenceError, ValueError):
    """A file credence wrote is damaged or of another version (exit code 2)."""


class RunIOError(CredenceError, OSError):
    """The operating system refused a read or a write (exit code 1)."""


class DivergedError(CredenceError, ArithmeticError):
    """A chain produced NaN or Inf, or an exploding potential (exit code 1)."""


class TrainingInterrupted(KeyboardInterrupt):
    """Training was stopped by Ctrl-C; every kept sample reached the run file, which
    `train(..., resume=True)` continues (exit code 130 on the command line)."""
