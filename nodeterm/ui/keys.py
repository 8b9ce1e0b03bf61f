"""The workbench's keys: one table feeds the bindings, the help screen and the command palette."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Key:
    keys: str          # Textual key names, comma separated
    action: str        # action string, e.g. "pane('steps')"
    title: str         # what it does (also the command palette entry)
    shown: str = ""    # label in the footer ("" = not in the footer)

    @property
    def display(self) -> str:
        names = {"question_mark": "?", "escape": "Esc", "f1": "F1", "ctrl+p": "Ctrl+P", "ctrl+q": "Ctrl+Q",
                 "left": "Left", "right": "Right", "ctrl+r": "Ctrl+R"}
        return "/".join(names.get(k, k) for k in self.keys.split(","))


KEYS: tuple[Key, ...] = (
    Key("question_mark,f1", "help", "Help: list every key", "help"),
    Key("1", "pane('circuit')", "Show the circuit: parts, nodes, parameters"),
    Key("2", "pane('steps')", "Show the procedure steps and equations"),
    Key("3", "pane('values')", "Show the parameter values to substitute"),
    Key("4", "pane('matrix')", "Show the matrix A x = b"),
    Key("5", "pane('results')", "Show the results: voltages, currents, [find]"),
    Key("6", "pane('claims')", "Show the claims: type your own, read the verdicts"),
    Key("7,a", "analyse", "Show the analyses: transfer function, limits, real op-amp"),
    Key("g", "response_next", "Frequency response: plot the next [find] quantity in s"),
    Key("w", "write_response", "Frequency response: write it as CSV (asks where)"),
    Key("m", "monte_carlo", "Tolerances: run Monte Carlo and worst case (c cancels)"),
    Key("n", "next_step", "Next step of the procedure", "next"),
    Key("b", "previous_step", "Back one step of the procedure", "back"),
    Key("v", "type_value", "Type a value for a parameter", "value"),
    Key("k", "substitute_known", "Substitute every value the file gives", "known"),
    Key("u", "undo", "Undo the last substitution (back to the study before it)", "undo"),
    Key("ctrl+r", "redo", "Redo the substitution undone last"),
    Key("f", "toggle_form", "Equation form: one line or 2-D"),
    Key("s", "solve", "Solve again"),
    Key("c", "cancel", "Cancel a running solve or Monte Carlo"),
    Key("o", "open_file", "Open another circuit file"),
    Key("r", "reload", "Reload the circuit file from disk"),
    Key("e", "export", "Export the equation set to a file", "export"),
    Key("d", "show_diff", "Show what the last reload changed (against the previous good version)"),
    Key("escape", "leave", "Leave a text box (back to the keys above)"),
    Key("q,ctrl+q", "quit", "Quit (asks first if a typed value would be lost)", "quit"),
)

PANE_HELP = """\
Panes (keys 1-7 from every pane; Tab moves between the widgets of a pane):
  1 Circuit  title, warnings, what meets at each node (part.pin), parts,
             parameters, [find]
  2 Steps    the procedure: n next, b back. Up/Down picks an equation: its
             parts get * in the parts list. Tab or Left goes to the parts:
             the picked part's terms get *; Tab or Right goes back.
  3 Values   the parameters; Enter (or v anywhere) opens the value dialog:
             the value goes to the parameter named beside the box, Up/Down
             choose another. u undoes a substitution, Ctrl+R redoes it.
  4 Matrix   A x = b, one row per equation, one column per unknown
  5 Results  node voltages, part, op-amp and source currents, [find];
             Left/Right scroll a page sideways
  6 Claims   type a claim (an equation, or NAME = value for a [find] name);
             Enter checks it and the box stays ready for the next one
  7 Analysis frequency response (g next quantity, w CSV), Monte Carlo (m),
             transfer functions, limits, real op-amp, sensitivities

Typing: a text box takes every key you type (so digits and letters never
run commands there); Esc leaves the box and the keys work again.
The file is reloaded when it changes on disk; if it no longer loads, its
error shows on the second line and the last good version stays on screen.
Ctrl+P opens the command palette: every action below is there by name.
"""


def help_text(extra: tuple[Key, ...] = ()) -> str:
    rows = [f"  {k.display:<9} {k.title}" for k in KEYS + extra]
    return ("nodeterm workbench keys (Esc or q closes; Up/Down scroll)\n\n" + "\n".join(rows)
            + "\n  Ctrl+P    Command palette\n\n" + PANE_HELP)
