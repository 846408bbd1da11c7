"""The `program` study computation: program-pulse V_T over case parameters."""
from pathlib import Path

from solver.case import load_case
from solver.study import get_computation, plan_study

CASES = Path(__file__).resolve().parent.parent / "cases"


def test_program_threshold_rises_with_gate_voltage_and_pulse_width():
    # a higher program voltage or a longer pulse stores more electrons (FN injection grows with field;
    # common practice, e.g. ISPP operation)
    case = load_case(CASES / "demo-cell.toml")
    comp = get_computation("program")
    v = []
    for gate_V, pulse_s in ((16.0, 1e-4), (18.0, 1e-4), (18.0, 1e-3)):
        out = comp.function(case.with_value("bias.gate_V", gate_V).with_value("bias.pulse_s", pulse_s))
        assert out["charge_cm2"] < 0
        v.append(out["threshold_V"])
    assert v[0] < v[1] < v[2]


def test_program_study_plan_over_tunnel_thickness():
    text = (CASES / "demo-cell.toml").read_text().replace('compute = "current"', 'compute = "program"')
    text = text.replace("count = 7", "count = 2").replace("count = 11", "count = 2")
    from solver.case import parse_case

    plan = plan_study(parse_case(text))
    assert plan.shape == (2, 2)
    assert [a.units for a in plan.axes] == ["nm", "V"]
    assert plan.compute.name == "program"
