"""The analysis pane's text for a study, computed in the solver process (no Textual here).

Each section is asked of the study and formatted by :mod:`nodeterm.present.analysis` on its own, so
one failing analysis is reported in place and the others still show.
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
    from nodeterm.engine.analysis.cautions import LINEAR_NOTE, merge, node_cautions, source_cautions
    from nodeterm.engine.analysis.limits import check_limits, limit_warnings, limited_opamps
    from nodeterm.engine.analysis.realopamp import compare_models, has_real_model
    from nodeterm.engine.analysis.sensitivity import nominal_values, scalar_quantities, sensitivities
    from nodeterm.engine.analysis.transfer import transfer_functions
    from nodeterm.present import analysis as show

    system, solution, circuit = study.system, study.solution, study.circuit
    checks: list = []

    def transfer():
        lines: list[str] = []
        for tf in transfer_functions(solution, circuit).values():
            lines += show.transfer_lines(tf) + [""]
        return lines

    def limits():
        if not limited_opamps(circuit):
            return []
        checks.extend(check_limits(system, solution))
        return show.limits_lines(checks)

    def real():
        if not has_real_model(circuit):
            return []
        return show.comparison_lines(compare_models(circuit, dict(system.values)))

    def sensitivity():
        quantities = scalar_quantities(circuit)
        if not quantities:
            return []
        return show.sensitivity_lines(sensitivities(quantities, nominal_values(circuit, dict(system.values))))

    def cautions():
        extra = source_cautions(circuit, system.values) + node_cautions(solution.node_voltages)
        return show.warning_lines(merge(system.warnings, extra, limit_warnings(checks)))

    sections = [
        _section("Transfer functions of the [find] quantities (in s)", transfer),
        _section("Op-amp output limits (rails, max_current)", limits),
        _section("Real op-amp model against the ideal one", real),
        _section("Normalized sensitivities (% change per % change of a parameter)", sensitivity),
        _section("Cautions", cautions),
    ]
    return analysis_sections(sections, LINEAR_NOTE)
