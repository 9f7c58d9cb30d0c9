"""Every public function of bcgen, every parameter, odd values: a result or a BcgenError.

Issue 12, item 6: the Python API checks its arguments like the commands do. Each public
callable of :data:`bcgen.__all__` is called with valid arguments, then with one argument
at a time replaced by an odd value (None, a bool, text, empty text, NaN, infinities,
1e308, 0, -1, a huge int, empty / several-value / 2-D arrays, a dict, an object, a
complex number, numpy scalars). Each call must either return finite results or raise a
:class:`bcgen.errors.BcgenError` subclass whose message is one line and names the
parameter (a file's name for a path or a spec's text). A plain TypeError, ValueError,
KeyError, AttributeError, OverflowError or MemoryError is a failure, and so is a NaN or
infinity in a result. A new public callable must be added to ``CALLS`` (checked).
"""

from __future__ import annotations

import dataclasses
import math
import numbers
import warnings
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import bcgen
from bcgen.errors import BcgenError

#: The odd values, each given in turn to every parameter.
WEIRD = [
    None, True, "65", "", math.nan, math.inf, -math.inf, 1e308, -1e308, 0, -1, 10**30,
    np.array([]), np.array([1.0, 2.0, 3.0]), [[1.0], [2.0]], np.zeros((2, 3)), {"a": 1},
    object(), 1j, np.int64(5), np.float32(65),
]

ORBIT = bcgen.solve(-6000.0)  # Berger (1978) orbit of 6 ka

SPEC_TEXT = """\
experiment: {name: fuzz}
epoch: 6ka
grid: {kind: zonal, resolution_deg: 30}
products: [orbit]
output: {directory: out}
"""


def _monthly_dataset() -> xr.Dataset:
    """Twelve monthly means of a noleap year, the smallest input of the conversions."""
    edges = np.array([0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334, 365.0])
    ds = xr.Dataset(
        {"tas": (("time",), np.linspace(270.0, 290.0, 12)),
         "time_bnds": (("time", "bnds"), np.stack([edges[:-1], edges[1:]], axis=1))},
        coords={"time": ("time", 0.5 * (edges[:-1] + edges[1:]),
                         {"units": "days since 0001-01-01", "calendar": "noleap",
                          "bounds": "time_bnds"})})
    return xr.decode_cf(ds, decode_times=xr.coders.CFDatetimeCoder(use_cftime=True))


def _orbit_table(folder: Path) -> Path:
    """A model's orbit table for 6 ka (what its orbit routine would print), made by bcgen."""
    solar = bcgen.SolarYear(ORBIT, "noleap")
    t = np.arange(0.0, 365.0, 30.0)
    lam, dec, rho = solar.solar_geometry(t)
    lines = ["time_days,declination_deg,distance_factor,true_longitude_deg"]
    lines += [f"{t[i]:.6f},{np.rad2deg(dec[i]):.10f},{rho[i]:.10f},{np.rad2deg(lam[i]):.10f}"
              for i in range(t.size)]
    path = folder / "orbit.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def calls(folder: Path) -> dict:
    """Public name -> (callable, valid positional arguments, valid keyword arguments)."""
    spec_path = folder / "fuzz.yaml"
    spec_path.write_text(SPEC_TEXT, encoding="utf-8")
    spec = bcgen.load_spec(spec_path)
    ds = _monthly_dataset()
    return {
        "Anchor": (bcgen.Anchor, (), {}),
        "ModelCalendar": (bcgen.ModelCalendar, ("noleap",), {}),
        "OrbitalElements": (bcgen.OrbitalElements, (0.0167, 23.44, 102.0), {}),
        "SolarYear": (bcgen.SolarYear, (ORBIT, "noleap"), {}),
        "annual_mean_insolation_wm2": (bcgen.annual_mean_insolation_wm2, (ORBIT, 65.0), {}),
        "build": (bcgen.build, (spec,), {"output_dir": folder / "built", "force": True}),
        "caloric_half_years": (bcgen.caloric_half_years, (ORBIT, 65.0), {"samples": 64}),
        "convert_perihelion": (bcgen.convert_perihelion,
                               (102.0, "perihelion_longitude", "sun_longitude_at_perihelion"),
                               {}),
        "daily_insolation": (bcgen.daily_insolation, (ORBIT, "noleap", 65.0), {}),
        "fixed_angle_months": (bcgen.fixed_angle_months, (ORBIT, "noleap"), {}),
        "fixed_day_months": (bcgen.fixed_day_months, (ORBIT, "noleap"), {}),
        "format_epoch": (bcgen.format_epoch, (-6000.0,), {}),
        "instantaneous_insolation": (bcgen.instantaneous_insolation,
                                     (ORBIT, "noleap", 10.0, 65.0, 0.0), {}),
        "insolation_at_true_longitude_wm2": (bcgen.insolation_at_true_longitude_wm2,
                                             (ORBIT, 65.0, 90.0), {}),
        "load_spec": (bcgen.load_spec, (spec_path,), {}),
        "monthly_insolation": (bcgen.monthly_insolation, (ORBIT, "noleap", 65.0), {}),
        "parse_epoch": (bcgen.parse_epoch, ("6ka",), {}),
        "parse_epochs": (bcgen.parse_epochs, ("6ka..0ka/1ka",), {}),
        "parse_spec_text": (bcgen.parse_spec_text, (SPEC_TEXT,), {"base_dir": folder}),
        "solve": (bcgen.solve, (-6000.0,), {}),
        "summer_energy_gj_m2": (bcgen.summer_energy_gj_m2, (ORBIT, 65.0), {"samples": 64}),
        "to_fixed_angle_months": (bcgen.to_fixed_angle_months, (ds, ORBIT), {}),
        "to_fixed_day_months": (bcgen.to_fixed_day_months, (ds,), {}),
        "validate": (bcgen.validate, (_orbit_table(folder), spec), {}),
    }


#: Other words that name a parameter in a message: a path is named by its file, a spec's
#: text by the file name it is reported under.
ALSO_NAMED = {
    ("load_spec", "path"): ("65",),
    ("validate", "spec"): ("65",),
    ("solve", "path"): ("65",),
    ("validate", "model_file"): ("65",),
    ("parse_spec_text", "text"): ("<string>",),
    # The words the command line and the spec share for these values.
    ("ModelCalendar", "name"): ("calendar",),
    ("OrbitalElements", "obliquity_deg"): ("obliquity",),
    ("OrbitalElements", "perihelion_longitude_deg"): ("longitude of perihelion",),
    ("convert_perihelion", "value"): ("longitude of perihelion",),
    ("solve", "obliquity_deg"): ("obliquity",),
    ("solve", "perihelion_deg"): ("longitude of perihelion",),
    ("solve", "perihelion_convention"): ("perihelion convention",),
    ("format_epoch", "years_from_1950"): ("epoch",),
    ("parse_epoch", "text"): ("epoch",),
    ("parse_epochs", "text"): ("epoch",),
}


def public_callables() -> list[str]:
    """Every name of bcgen.__all__ that is called: functions and classes other than errors."""
    names = []
    for name in bcgen.__all__:
        value = getattr(bcgen, name)
        if isinstance(value, type) and issubclass(value, (BaseException, Warning)):
            continue
        if callable(value):
            names.append(name)
    return names


#: Fields where NaN is the documented "not estimated" (a validation finding with nothing
#: fitted, such as "unexplained"; the JSON report writes null).
NOT_APPLICABLE = {("Finding", "noise_after_wm2")}


def non_finite(value, where: str = "result", depth: int = 0) -> str | None:
    """Return where a NaN or infinity sits in a result (arrays, dataclasses, datasets), or None."""
    if depth > 4 or value is None or isinstance(value, (bool, str, bytes, Path)):
        return None
    if isinstance(value, (numbers.Number, np.ndarray, np.generic)):
        arr = np.asarray(value)
        if arr.dtype.kind in "fc" and not np.all(np.isfinite(arr)):
            return where
        return None
    if isinstance(value, xr.Dataset):
        for name, var in value.data_vars.items():
            found = non_finite(var.values, f"{where}[{name!r}]", depth + 1)
            if found:
                return found
        return None
    if dataclasses.is_dataclass(value):
        for field in dataclasses.fields(value):
            if (type(value).__name__, field.name) in NOT_APPLICABLE:
                continue
            found = non_finite(getattr(value, field.name), f"{where}.{field.name}", depth + 1)
            if found:
                return found
        return None
    if isinstance(value, dict):
        items = value.items()
    elif isinstance(value, (list, tuple)):
        items = enumerate(value)
    else:
        return None
    for key, item in items:
        found = non_finite(item, f"{where}[{key!r}]", depth + 1)
        if found:
            return found
    return None


def _parameters(func) -> list[str]:
    import inspect

    kinds = (inspect.Parameter.POSITIONAL_OR_KEYWORD, inspect.Parameter.KEYWORD_ONLY)
    return [p.name for p in inspect.signature(func).parameters.values() if p.kind in kinds]


def check_one(name: str, func, args: tuple, kwargs: dict, param: str, value) -> str | None:
    """Call with ``param`` replaced by ``value``; return what went wrong, or None."""
    params = _parameters(func)
    args, kwargs = list(args), dict(kwargs)
    index = params.index(param) if param in params else len(params)  # else one of **options
    if index < len(args):
        args[index] = value
    else:
        kwargs[param] = value
    shown = " ".join(repr(value).split())
    label = f"{name}({param}={shown:.40})"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            result = func(*args, **kwargs)
    except BcgenError as exc:
        text = str(exc)
        if "\n" in text or not text.strip():
            return f"{label}: {type(exc).__name__} message is not one line: {text!r:.200}"
        names = (param,) + ALSO_NAMED.get((name, param), ())
        if not any(n in text for n in names):
            return f"{label}: {type(exc).__name__} message does not name {param}: {text:.160}"
        return None
    except Exception as exc:  # noqa: BLE001 -- the point of the test
        first = str(exc).splitlines()[0] if str(exc) else ""
        return f"{label}: {type(exc).__name__}: {first}"[:220]
    where = non_finite(result)
    if where:
        return f"{label}: returned a NaN or infinity in {where}"
    return None


@pytest.fixture(scope="module")
def public_calls(tmp_path_factory):
    return calls(tmp_path_factory.mktemp("fuzz"))


def test_every_public_callable_is_fuzzed(public_calls):
    assert sorted(public_calls) == sorted(public_callables())


@pytest.mark.parametrize("name", public_callables())
def test_odd_arguments_give_a_result_or_a_bcgen_error(name, public_calls, tmp_path,
                                                       monkeypatch):
    monkeypatch.chdir(tmp_path)  # a path-like odd value must not leave files elsewhere
    # validate's diagnosis (fits of its catalogue of mistakes, about 1.3 s a call) is
    # replaced by "no finding": the options are checked before it, and the comparison and
    # verdict still run on every call.
    from bcgen.validation.diagnose import Diagnosis

    monkeypatch.setattr(Diagnosis, "run", lambda self: [])
    func, args, kwargs = public_calls[name]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        assert non_finite(func(*args, **kwargs)) is None  # the valid call itself
    problems = [problem for param in _parameters(func) for value in WEIRD
                if (problem := check_one(name, func, args, kwargs, param, value))]
    assert not problems, f"{len(problems)} calls escape:\n" + "\n".join(problems)


def _orbit_csv(folder: Path) -> Path:
    """A small orbit table of the ``table`` solution (rounded present-day-like values)."""
    path = folder / "orbit_table.csv"
    path.write_text("age_ka_bp,eccentricity,obliquity_deg,perihelion_longitude_deg\n"
                    "0,0.0167,23.45,102.0\n1,0.0172,23.55,84.0\n2,0.0176,23.65,66.0\n",
                    encoding="utf-8")
    return path


@pytest.mark.parametrize("solution", ["fixed", "table"])
def test_odd_options_of_a_solution_give_a_result_or_a_bcgen_error(solution, tmp_path,
                                                                    monkeypatch):
    # solve's **options reach the solution: each option is fuzzed like a parameter.
    monkeypatch.chdir(tmp_path)
    options = {
        "fixed": {"eccentricity": 0.0187, "obliquity_deg": 24.1, "perihelion_deg": 0.87,
                  "perihelion_convention": "perihelion_longitude", "idealized": False},
        "table": {"path": _orbit_csv(tmp_path)},
    }[solution]
    args = (-1000.0, solution)
    assert non_finite(bcgen.solve(*args, **options)) is None  # the valid call itself
    problems = [problem for param in options for value in WEIRD
                if (problem := check_one("solve", bcgen.solve, args, options, param, value))]
    assert not problems, f"{len(problems)} calls escape:\n" + "\n".join(problems)
