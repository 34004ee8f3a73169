"""The report's case and run facts as people read them (ringprint.analysis.report_facts).

Issue 13: no Python reprs, lengths in the case's unit, a loss tangent beside the
conductivity it became. The conductivity of a loss tangent is sigma = 2 pi f eps0 eps_r
tan(delta) (Pozar, Microwave Engineering, 4th ed., 2012, sec. 1.3), computed here by
the library (materials.Material.conductivity) and only shown by the facts.
"""

import math

from scipy.constants import epsilon_0

from ringprint.analysis.report_facts import grid_facts, parts_rows, run_facts

SUMMARY = {
    "case": {"name": "tag/case", "units": "mm",
             "parts": [{"name": "housing", "material": "custom", "eps_r": 2.7, "loss_tangent": 0.006,
                        "sigma_s_per_m": 2 * math.pi * 1.871e9 * epsilon_0 * 2.7 * 0.006,
                        "conductor": False, "perfect_conductor": False},
                       {"name": "shield can", "material": "pec", "eps_r": 1.0, "sigma_s_per_m": None,
                        "conductor": True, "perfect_conductor": True},
                       {"name": "frame", "material": "copper", "eps_r": 1.0, "sigma_s_per_m": 5.8e7,
                        "conductor": True, "perfect_conductor": True}]},
    "grid": {"nodes": [63, 55, 41], "cells": 133920, "step_min_m": 0.0018244787979613333,
             "cpml_cells": 10, "padding_m": 0.012, "origin_m": [-0.0565588, -0.0492609, -0.0349896]},
    "run": {"steps": 12288, "dt_s": 2.463e-12, "stop_reason": "decayed to 1e-08 of the peak energy",
            "ringdown_start_s": 1.4779e-09, "stepping_time_s": 184.1,
            "probe": {"center_m": [-0.002, 0.008, 0.006], "normal": "y", "size_cells": 1,
                      "placed": "case"},
            "pickups": ["probe_emf", "p01_Ex", "p02_Ey", "p03_Ez"], "extra": {"a_b": [1, 2]}},
}


def test_facts_have_no_python_reprs_and_use_the_case_unit():
    facts = dict(grid_facts(SUMMARY) + run_facts(SUMMARY))
    text = " ".join(facts.values())
    for mark in ("[", "]", "{", "}", "_m", "True", "None"):
        assert mark not in text, (mark, text)
    assert facts["smallest cell"] == "1.824 mm" and facts["air padding"] == "12 mm"
    assert facts["grid origin"] == "(-56.56, -49.26, -34.99) mm"
    assert facts["probe"] == "loop at (-2, 8, 6) mm, axis y, 1 cell across, as the case gives it"
    assert facts["pickups"] == "4: the probe's own EMF and 3 field pickups"
    assert facts["ring-down analysed from"] == "1.48 ns" and facts["of which stepping"] == "3 min 04 s"
    assert facts["extra"] == "a b 1, 2"


def test_loss_tangent_is_shown_beside_the_conductivity_it_became():
    rows = {r[0]: r[2] for r in parts_rows(SUMMARY)}
    sigma = 2 * math.pi * 1.871e9 * epsilon_0 * 2.7 * 0.006     # 1.69e-3 S/m
    assert rows["housing"] == f"eps_r 2.7, loss tangent 0.006 \u2192 sigma {sigma:.3g} S/m"
    assert rows["shield can"] == "perfect conductor"
    assert rows["frame"].startswith("perfect conductor in the solver; sigma 5.80e7 S/m")
