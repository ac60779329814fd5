"""The one exception type a user meets for bad input, with the fields every message carries."""
from siltandem.text import printable, shorten

#: longest problem or place a message shows, and longest fix (a backstop: values are quoted as
#: short excerpts where they are read, text.excerpt)
PROBLEM_LIMIT, FIX_LIMIT = 600, 1200


class StackError(ValueError):
    """Bad input: a stack file, a spectrum, an option.

    Attributes
    ----------
    file : str or None
        The file that holds the problem (None for an option or an API argument).
    where : str or None
        The place inside it: ``element 2 'top'``, ``key conditions.suns``, ``line 4``.
    problem : str
        What is wrong.
    fix : str
        How to fix it.

    Every field is kept printable: control characters a file or a name may carry (terminal
    escape codes, line breaks) are written as escapes (``text.printable``); a problem or place
    longer than 600 characters (a fix longer than 1200) is cut, saying so.
    """

    def __init__(self, problem, *, file=None, where=None, fix=""):
        self.file = None if file is None else printable(file)
        self.where = None if where is None else printable(shorten(where, PROBLEM_LIMIT))
        self.problem = printable(shorten(problem, PROBLEM_LIMIT))
        self.fix = printable(shorten(fix, FIX_LIMIT))
        super().__init__(self._text())

    def _text(self):
        head = ": ".join(part for part in (self.file, self.where) if part)
        text = f"{head}: {self.problem}" if head else self.problem
        if self.fix:
            text += f"\n  fix: {self.fix}"
        return text

    def to_dict(self):
        return {"file": self.file, "where": self.where, "problem": self.problem, "fix": self.fix}


class ModelWarning(UserWarning):
    """A warning about a solved model: what a result's ``warnings`` list holds (a tunnel junction
    driven past its peak, an isotype interface that blocks, a missing number, ...), issued through
    Python's :mod:`warnings` as well, so that a notebook or a script sees it. The command line,
    which prints the list itself, silences it."""


class CompileNotice(UserWarning):
    """The first solve after installing or updating siltandem compiles the solver's kernels
    (about 10-20 s, once; numba caches them). Issued once per process, before that solve, so a
    notebook does not look stuck. The command line prints its own line instead."""
