"""Shared helpers of the workbench tests."""

from __future__ import annotations


async def settle(pilot, app, seconds: float = 20.0) -> None:
    """Wait until the solve worker has finished (or ``seconds`` pass)."""
    for _ in range(int(seconds / 0.05)):
        await pilot.pause(0.05)
        if app.busy_since is None:
            break
    await pilot.pause()


def text_of(app, selector: str) -> str:
    """The text a Static shows."""
    return str(app.query_one(selector).render())


def prompts(app, selector: str) -> list[str]:
    lst = app.query_one(selector)
    return [str(lst.get_option_at_index(i).prompt) for i in range(lst.option_count)]


def ladder(n: int) -> str:
    """A fully symbolic RC ladder of ``n`` sections (every R and C its own symbol; invented test
    circuit): from 5 sections on, its results are large (kept as polynomials)."""
    lines = [f'title = "{n}-section symbolic RC ladder"', "[parameters]", 'Vin = ""']
    lines += [f'R{k} = ""\nC{k} = ""' for k in range(1, n + 1)]
    lines += ["[parts]", 'VS = { kind = "voltage_source", nodes = ["n0", "gnd"], value = "Vin" }']
    for k in range(1, n + 1):
        lines.append(f'RS{k} = {{ kind = "resistor", nodes = ["n{k - 1}", "n{k}"], value = "R{k}" }}')
        lines.append(f'CS{k} = {{ kind = "capacitor", nodes = ["n{k}", "gnd"], value = "C{k}" }}')
    return "\n".join(lines) + "\n"
