"""A part's material as the case file gives it: a library name or a table (private
helper of :mod:`ringprint.analysis.case`)."""

from __future__ import annotations

from ringprint.analysis._case_checks import Checker
from ringprint.analysis.materials import Material, get_material
from ringprint.errors import RingprintError

__all__ = ["MATERIAL_KEYS", "read_material"]


MATERIAL_KEYS = ("name", "eps_r", "loss_tangent", "sigma", "conductor", "at", "mu_r")


def read_material(ck: Checker, value, here: tuple) -> tuple[Material, str | None]:
    try:
        if isinstance(value, str):
            return get_material(value), value
        if not isinstance(value, dict):
            ck.fail(here, 'expected a library name such as "abs" or a table '
                    "{ eps_r = ..., loss_tangent = ... }")
        table = ck.table(value, here, MATERIAL_KEYS)
        conductor = ck.boolean(table.get("conductor", False), here + ("conductor",))
        if conductor and "sigma" in table:
            ck.number(table["sigma"], here + ("sigma",), low=0.0, low_open=True,
                      hint='a conductor\'s sigma is its conductivity in S/m; leave sigma out '
                      '(or use material = "pec") for the lossless perfect conductor')
        if "mu_r" in table and not conductor:
            ck.fail(here + ("mu_r",), "mu_r is for conductors only (set conductor = true) "
                    "or remove it")
        lowest = {"eps_r": 1.0, "loss_tangent": 0.0, "sigma": 0.0, "mu_r": 1.0}
        values = {key: ck.number(table[key], here + (key,), low=low)
                  for key, low in lowest.items() if key in table}
        at = ck.frequency(table["at"], here + ("at",)) if "at" in table else None
        name = ck.string(table.get("name", "custom"), here + ("name",))
        if not conductor and "eps_r" not in values:
            ck.fail(here, "a dielectric needs eps_r (or set conductor = true)")
        return Material(name, frequency_hz=at, is_conductor=conductor, **values), None
    except RingprintError as exc:
        if str(exc).startswith(f"{ck.file}:"):
            raise
        ck.fail(here, str(exc))
