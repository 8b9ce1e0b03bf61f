"""The workbench session: the loaded circuit and an undo stack of studies.

Pure Python, no Textual, so tests drive it directly. Every state the user reaches is an
:class:`Entry`: an immutable study (one circuit under one choice of values, its records computed
lazily) plus the pane text printed for it. Substituting pushes a new entry (and drops what could
be redone); undo and redo move along the stack, so going back shows the earlier study with the
records it already had: steps, values, matrix, results and claims always belong to one study.

A reload builds the same choices on the new file and drops the substitutions that no longer
apply; a file that no longer loads changes nothing.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field

from typing import TYPE_CHECKING

from nodeterm.engine.errors import InputError

if TYPE_CHECKING:
    from nodeterm.engine.study import Study

# The engine (SymPy) is imported by the methods that use it, on first use: the workbench draws its
# first screen before that (see :mod:`.first_screen`).


@dataclass(eq=False)
class Entry:
    """One state of the session: a study, and text printed for it (key -> text).

    ``texts`` holds what the solver process printed for this study (matrix, results at a width and
    form, verdicts of the typed claims, analyses), so undo shows it again without printing anew.
    """

    study: Study
    label: str
    texts: dict = field(default_factory=dict)

    @property
    def system(self):
        return self.study.system

    def has(self, record: str) -> bool:
        return self.study.computed(record)


@dataclass
class Session:
    """What the workbench shows: one circuit, the studies reached so far, and the typed claims.

    Attributes:
        path: the circuit file.
        stack: every entry reached by substituting; ``stack[pos]`` is shown.
        pos: the current entry; entries after it can be redone.
        claims: claims typed in the workbench (name -> text), checked against every study.
        mtime: modification time of ``path`` when it was last loaded.
        error: the message of the last failed load, or None.
    """

    path: str | None = None
    stack: list[Entry] = field(default_factory=list)
    pos: int = 0
    claims: dict[str, str] = field(default_factory=dict)
    mtime: float | None = None
    error: str | None = None

    @property
    def entry(self) -> Entry | None:
        return self.stack[self.pos] if self.stack else None

    @property
    def study(self) -> Study | None:
        return self.entry.study if self.stack else None

    @property
    def system(self):
        return self.entry.system if self.stack else None

    @property
    def loaded(self) -> bool:
        return bool(self.stack)

    @property
    def can_undo(self) -> bool:
        return self.pos > 0

    @property
    def can_redo(self) -> bool:
        return self.pos + 1 < len(self.stack)

    # --- loading ------------------------------------------------------------
    def open(self, path: str) -> None:
        """Load ``path`` with no substitutions; on failure nothing changes and InputError is raised."""
        from nodeterm.engine.circuit.loader import load_circuit
        from nodeterm.engine.study import Study
        mtime = _mtime(path)
        try:
            study = Study(load_circuit(path))
            study.system  # noqa: B018 - build the procedure now: a circuit error is a load error
        except InputError as err:
            self.error = str(err)
            raise
        self.path, self.stack, self.pos, self.mtime, self.error = path, [Entry(study, "opened")], 0, mtime, None
        self.claims = {}

    def reload(self) -> list[str]:
        """Load the file again; every entry gets the same choice on the new circuit, less what no longer applies.

        Returns:
            Messages about substitutions that were dropped.

        Raises:
            InputError: the file no longer loads; the last good state is kept.
        """
        from nodeterm.engine.circuit.loader import load_circuit
        from nodeterm.engine.study import Study
        from nodeterm.engine.values import ValueChoice, parse_value
        if self.path is None:
            raise InputError("no file is open", hint="open a circuit file first")
        self.mtime = _mtime(self.path)  # do not retry the same broken file every poll
        try:
            circuit = load_circuit(self.path)
            base = Study(circuit)
            base.system  # noqa: B018
        except InputError as err:
            self.error = str(err)
            raise
        dropped: list[str] = []
        stack: list[Entry] = []
        for i, entry in enumerate(self.stack):
            steps = []
            for step in entry.study.choice.steps:
                try:
                    if step.kind == "set":
                        for name, value in step.items:
                            parse_value(circuit, name, value)
                    steps.append(step)
                except InputError as err:
                    if i == self.pos:
                        dropped.append(f"dropped {step.describe()}: {err.message}")
            stack.append(Entry(base.with_choice(ValueChoice(tuple(steps))), entry.label))
        self.stack, self.error = stack, None
        return dropped

    def changed_on_disk(self) -> bool:
        """True when the file's modification time differs from the one last loaded."""
        return self.path is not None and _mtime(self.path) != self.mtime

    # --- substitution -------------------------------------------------------
    def substitute(self, name: str, value: str) -> Entry:
        """Substitute one parameter (a number or an expression in the others); returns the new entry.

        A parameter substituted before gets the new value in place of the old one: the new value is
        put first, where values already substituted win over the file's.

        Raises:
            InputError: a bad value or name; nothing changes.
        """
        from nodeterm.engine.values import Substitution, ValueChoice, parse_value
        study = self._study()
        parse_value(study.circuit, name, value)  # fails here, before anything changes
        new = Substitution("set", ((name, value),))
        if name in study.system.values:
            rest = []
            for step in study.choice.steps:
                if step.kind == "set":
                    items = tuple((n, v) for n, v in step.items if n != name)
                    if items:
                        rest.append(Substitution("set", items))
                else:
                    rest.append(step)
            choice = ValueChoice((new,) + tuple(rest))
        else:
            choice = study.choice.then(new)
        return self._push(study.with_choice(choice), f"{name} = {value}")

    def substitute_known(self) -> Entry | None:
        """Substitute every value the file gives; None when every one is substituted already."""
        from nodeterm.engine.values import KNOWN
        study = self._study()
        if study.system.apply(KNOWN) is study.system:
            return None
        return self._push(study.with_choice(study.choice.then(KNOWN)), "all known values")

    def undo(self) -> Entry | None:
        """Go back to the study before the last substitution; None when there is none."""
        if not self.can_undo:
            return None
        self.pos -= 1
        return self.entry

    def redo(self) -> Entry | None:
        """Go forward to the study an undo left; None when there is none."""
        if not self.can_redo:
            return None
        self.pos += 1
        return self.entry

    def _push(self, study: Study, label: str) -> Entry:
        study.system  # noqa: B018 - build it now: a failure leaves the stack as it was
        entry = Entry(study, label)
        del self.stack[self.pos + 1:]
        self.stack.append(entry)
        self.pos = len(self.stack) - 1
        return entry

    def _study(self) -> Study:
        if not self.stack:
            raise InputError("no circuit is loaded", hint="open a circuit file first")
        return self.study

    def done(self) -> list[str]:
        """Labels of the substitutions that lead to the current entry, in order."""
        return [e.label for e in self.stack[1:self.pos + 1]]

    def undone(self) -> list[str]:
        """Labels of what redo would bring back, next first."""
        return [e.label for e in self.stack[self.pos + 1:]]

    # --- claims -------------------------------------------------------------
    def add_claim(self, text: str) -> str:
        """Record a typed claim; returns its name (a [find] name for ``NAME = value``, else typedN).

        Raises:
            InputError: the text has no ``=``.
        """
        circuit = self._study().circuit
        head, sep, tail = text.partition("=")
        if not sep:
            raise InputError("a claim needs '=': an equation, or NAME = value for a [find] name "
                             f"({', '.join(circuit.find) or 'this circuit has none'})")
        if head.strip() in circuit.find and "=" not in tail:
            name, claim = head.strip(), tail.strip()
        else:
            name, claim = f"typed{len(self.claims) + 1}", text
        self.claims[name] = claim
        return name


def _mtime(path: str) -> float | None:
    try:
        return os.stat(path).st_mtime_ns
    except OSError:
        return None
