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
