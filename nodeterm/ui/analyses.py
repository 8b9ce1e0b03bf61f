"""The analysis pane's text for a study, computed in the solver process (no Textual here).

Each section asks the study for one record and formats it with :mod:`nodeterm.present.analysis`, on
its own, so one failing analysis is reported in place and the others still show.
"""

from __future__ import annotations

from nodeterm.present.panes import analysis_sections


def _section(title: str, make) -> tuple[str, list[str]]:
    try:
        lines = make()
    except Exception as exc:  # noqa: BLE001 - one analysis failing must not hide the others
        lines = [f"! could not compute: {type(exc).__name__}: {exc}"]
    return title, list(lines or [])


def analysis_lines(study) -> list[str]:
    """Every analysis that applies to the study's circuit, as text lines."""
    from nodeterm.engine.analysis.cautions import LINEAR_NOTE
    from nodeterm.engine.analysis.realopamp import has_real_model
    from nodeterm.present import analysis as show

    def transfer():
        lines: list[str] = []
        for tf in study.transfer.values():
            lines += show.transfer_lines(tf) + [""]
        return lines

    def limits():
        return show.limits_lines(list(study.limits)) if study.limits else []

    def real():
        return show.comparison_lines(study.comparison()) if has_real_model(study.circuit) else []

    def sensitivity():
        return show.sensitivity_lines(study.sensitivities) if study.scalar_quantities else []

    sections = [
        _section("Transfer functions of the [find] quantities (in s)", transfer),
        _section("Op-amp output limits (rails, max_current)", limits),
        _section("Real op-amp model against the ideal one", real),
        _section("Normalized sensitivities (% change per % change of a parameter)", sensitivity),
        _section("Cautions", lambda: show.warning_lines(study.warnings, 74)),
    ]
    return analysis_sections(sections, LINEAR_NOTE)
