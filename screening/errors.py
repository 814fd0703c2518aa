"""The base of every error caused by the user's input.

An :class:`InputError` means "the input is wrong, and the message says where and what is
expected": the command line exits with code 2 and the service answers 4xx. Anything else that
escapes is a failure inside the tool (exit 3, HTTP 500). Each layer raises its own subclass
(``CaseError`` for case files, ``UnitError`` for quantities, ``RuleSetError`` for rule files,
``RegisterError`` for registers, ``TemplateError`` and ``MemoInputError`` for memos).
"""
from __future__ import annotations


class InputError(Exception):
    """A problem with what the user gave the tool (exit code 2), never a fault of the tool itself."""

    exit_code = 2


class EnvironmentProblem(InputError):
    """The user's files or folders cannot be used as asked (no such file, no permission, a disk
    full, a name too long, a symlink loop): exit code 2, with the path and the reason."""

    def __init__(self, message: str, reason: str | None = None):
        super().__init__(message)
        self.reason = reason or message
