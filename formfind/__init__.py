"""formfind: find and check arch axes.

A few calls do the whole job from a script or notebook::

    import formfind
    case = formfind.load_case("cases/footbridge.toml")
    result = formfind.analyse(case)          # the given axis under every case and combination
    result.combinations.M                    # bending moments (states, stations), kNm
    shape = formfind.find_shape(case)        # the axis of least bending, with its certificate
    verdicts = formfind.check(case, formfind.analyse(case, axis=shape.axis))
    rows = list(formfind.run_study(case, formfind.grid((30.0, 36.0), (0.15, 0.2, 0.25))))

Results are an aid to a qualified engineer; local codes and licensed practice govern.
"""

from __future__ import annotations


def _version() -> str:
    """The installed package's version (pyproject.toml is the one place it is stated)."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("formfind")
    except PackageNotFoundError:  # run from a source tree that was never installed
        return "0+unknown"


__version__ = _version()

# Public names, imported on first use so that `import formfind` (and the command line's --version,
# --help and validate) never loads the solvers, scipy.sparse or matplotlib.
_PUBLIC = {
    "CaseAnalysis": "formfind.analysis.engine",
    "analyse": "formfind.analysis.engine",
    "Response": "formfind.analysis.response",
    "summarise": "formfind.analysis.response",
    "CheckResult": "formfind.design.check",
    "check": "formfind.design.check",
    "ShapeResult": "formfind.design.shape",
    "find_shape": "formfind.design.shape",
    "StudyRow": "formfind.design.study",
    "grid": "formfind.design.study",
    "run_study": "formfind.design.study",
    "least_thickness": "formfind.design.thrust",
    "AnalysisError": "formfind.errors",
    "ArgumentError": "formfind.errors",
    "FormFindingError": "formfind.errors",
    "CaseError": "formfind.errors",
    "FormfindError": "formfind.errors",
    "OutputError": "formfind.errors",
    "Case": "formfind.model.case",
    "load_case": "formfind.model.case",
    "parse_case": "formfind.model.case",
    "Axis": "formfind.model.geometry",
    "figures": "formfind.output.package",
}


def __getattr__(name: str):
    if name == "build":  # the case builders, a module: formfind.build.geometry(...), ...
        import importlib

        value = importlib.import_module("formfind.model.builders")
        globals()[name] = value
        return value
    module = _PUBLIC.get(name)
    if module is None:
        raise AttributeError(f"module 'formfind' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_PUBLIC) | {"build"})


__all__ = [
    "AnalysisError",
    "ArgumentError",
    "FormFindingError",
    "Axis",
    "Case",
    "CaseAnalysis",
    "CaseError",
    "CheckResult",
    "FormfindError",
    "OutputError",
    "Response",
    "ShapeResult",
    "StudyRow",
    "__version__",
    "analyse",
    "build",
    "check",
    "figures",
    "find_shape",
    "grid",
    "least_thickness",
    "load_case",
    "parse_case",
    "run_study",
    "summarise",
]
