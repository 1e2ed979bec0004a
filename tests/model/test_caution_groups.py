"""Identical cautions are grouped: one per message, with every subject it applies to."""

from __future__ import annotations

from model.cautions import Caution, group_cautions


def test_cautions_that_differ_only_in_figures_and_variant_are_one_group_with_their_ranges():
    warnings = [
        Caution(
            "Hip arthroplasty: changed practice, sevoflurane: predicted inspired O2 falls to 15 %, under the "
            "floor of 30 %: hypoxic mixture; raise the O2 share or the flow",
            "hazard",
        ),
        Caution(
            "Knee arthroplasty, Spinal fusion: changed practice, desflurane with N2O: predicted inspired O2 falls "
            "to 5 %, under the floor of 30 %: hypoxic mixture; raise the O2 share or the flow",
            "hazard",
        ),
        Caution("Hip arthroplasty: changed practice, sevoflurane: 0.50 L/min is under the set minimum", "labelling"),
        Caution("Hip arthroplasty: changed practice, sevoflurane, maintenance: a slow target", "caution"),
    ]
    groups = group_cautions(warnings)
    assert [g.severity for g in groups] == ["hazard", "caution", "labelling"]
    hazard = groups[0]
    assert hazard.members == 2
    assert hazard.applies_to == ("Hip arthroplasty", "Knee arthroplasty", "Spinal fusion")
    assert hazard.variants == ("changed practice, sevoflurane", "changed practice, desflurane with N2O")
    assert hazard.text.startswith("predicted inspired O2 falls to 5-15 %, under the floor of 30 %")


def test_a_plan_caution_keeps_its_figures_and_phases():
    warnings = [
        Caution("maintenance: predicted inspired O2 falls to 17 %, under the floor of 30 %: hypoxic mixture", "hazard"),
        Caution("emergence: predicted inspired O2 falls to 17 %, under the floor of 30 %: hypoxic mixture", "hazard"),
    ]
    (g,) = group_cautions(warnings)
    assert g.applies_to == ("maintenance", "emergence") and g.variants == ()
    assert g.text == "predicted inspired O2 falls to 17 %, under the floor of 30 %: hypoxic mixture"
