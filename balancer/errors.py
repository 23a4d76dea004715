"""Exceptions balancer raises; the CLI turns each family into one exit status."""

from __future__ import annotations

from dataclasses import dataclass


class BalancerError(Exception):
    """Base of every error balancer reports to a user."""

    exit_status = 1


@dataclass(frozen=True, slots=True)
class Problem:
    """One thing wrong with an input, and where it is (``Circuits!E14``, ``Panel!B3``)."""

    where: str
    what: str

    def __str__(self) -> str:
        return f"{self.where}: {self.what}" if self.where else self.what


class ScheduleError(BalancerError):
    """The schedule cannot be used as given; carries every problem found, each with its place."""

    exit_status = 2

    def __init__(self, problems: list[Problem] | Problem | str, source: str = "") -> None:
        if isinstance(problems, str):
            problems = [Problem("", problems)]
        elif isinstance(problems, Problem):
            problems = [problems]
        self.problems = list(problems)
        self.source = source
        head = f"{source}: " if source else ""
        count = len(self.problems)
        lines = [f"{head}{count} problem{'s' if count != 1 else ''} in the schedule:"]
        lines += [f"  {p}" for p in self.problems]
        super().__init__("\n".join(lines))


class OutputError(BalancerError):
    """An output file cannot be written (no such folder, no permission, disk full, a folder in
    the way, or it is the input); the message names the path and the reason."""

    exit_status = 2


class InfeasibleError(BalancerError):
    """No arrangement satisfies the panel's rules; the message names the conflict."""

    exit_status = 4


class SolverError(BalancerError):
    """The optimiser failed to run or returned something unusable."""

    exit_status = 3
