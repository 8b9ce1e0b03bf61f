"""The workbench session: the loaded circuit, its substitutions, and undo.

Pure Python, no Textual, so tests can drive it directly. It holds no circuit
logic: it calls the engine (``load_circuit``, ``build_system``,
``System.substitute``) and remembers what the user did so that a reload can
replay the substitutions on the new file and a failed load changes nothing.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field

from nodeterm.engine import InputError, build_system, load_circuit
from nodeterm.engine.equations.system import System


@dataclass
class Session:
    """What the workbench shows: one circuit and the substitutions applied to it.

    Attributes:
        path: the circuit file.
        systems: the system as built, then one more entry per applied substitution.
        ops: the substitutions applied, in order (``{"R1": "10k"}``; ``"known"`` for all known values).
        mtime: modification time of ``path`` when it was last loaded.
        error: the message of the last failed load, or None.
    """

    path: str | None = None
    systems: list[System] = field(default_factory=list)
    ops: list[object] = field(default_factory=list)
    mtime: float | None = None
    error: str | None = None

    @property
    def system(self) -> System | None:
        return self.systems[-1] if self.systems else None

    @property
    def loaded(self) -> bool:
        return bool(self.systems)

    # --- loading ------------------------------------------------------------
    def open(self, path: str) -> None:
        """Load ``path`` with no substitutions; on failure nothing changes and InputError is raised."""
        mtime = _mtime(path)
        try:
            system = build_system(load_circuit(path))
        except InputError as err:
            self.error = str(err)
            raise
        self.path, self.systems, self.ops, self.mtime, self.error = path, [system], [], mtime, None

    def reload(self) -> list[str]:
        """Load the file again and replay the substitutions that still apply.

        Returns:
            Messages about substitutions that could not be replayed.

        Raises:
            InputError: the file no longer loads; the last good state is kept.
        """
        if self.path is None:
            raise InputError("no file is open", hint="open a circuit file first")
        self.mtime = _mtime(self.path)  # do not retry the same broken file every poll
        try:
            base = build_system(load_circuit(self.path))
        except InputError as err:
            self.error = str(err)
            raise
        systems, ops, dropped = [base], [], []
        for op in self.ops:
            try:
                systems.append(_apply(systems[-1], op))
                ops.append(op)
            except InputError as err:
                dropped.append(f"dropped {_op_text(op)}: {err.message}")
        self.systems, self.ops, self.error = systems, ops, None
        return dropped

    def changed_on_disk(self) -> bool:
        """True when the file's modification time differs from the one last loaded."""
        return self.path is not None and _mtime(self.path) != self.mtime

    # --- substitution -------------------------------------------------------
    def substitute(self, name: str, value: str) -> None:
        """Substitute one parameter; raises InputError (nothing changes) on a bad value."""
        self._push({name: value})

    def substitute_known(self) -> bool:
        """Substitute every value the file gives; False when there was nothing left to substitute."""
        return self._push("known")

    def undo(self) -> bool:
        """Take back the last substitution; False when there is none."""
        if len(self.systems) <= 1:
            return False
        self.systems.pop()
        self.ops.pop()
        return True

    def _push(self, op: object) -> bool:
        system = self.system
        if system is None:
            raise InputError("no circuit is loaded", hint="open a circuit file first")
        new = _apply(system, op)
        if new is system:
            return False
        self.systems.append(new)
        self.ops.append(op)
        return True

    def describe_ops(self) -> list[str]:
        return [_op_text(op) for op in self.ops]


def _apply(system: System, op: object) -> System:
    return system.substitute_known() if op == "known" else system.substitute(op)


def _op_text(op: object) -> str:
    if op == "known":
        return "all known values"
    return ", ".join(f"{k} = {v}" for k, v in op.items())


def _mtime(path: str) -> float | None:
    try:
        return os.stat(path).st_mtime_ns
    except OSError:
        return None
