"""steadyfit: estimation and calibration of steady-state growth regressions.

The library works without the command line::

    import steadyfit
    findings = steadyfit.run("specs/demo.toml")
    print(findings)                       # compact tables
    folder = steadyfit.write_run(findings)  # run folder with summary.md, results.json

Heavy dependencies load on first use, so importing the package is cheap.
"""

from __future__ import annotations

from typing import Any

__version__ = "0.1.0"

_EXPORTS = {
    "run": ("steadyfit.pipeline", "run"),
    "plan": ("steadyfit.pipeline", "plan"),
    "build_analysis": ("steadyfit.analysis", "build_analysis"),
    "load_spec": ("steadyfit.spec", "load_spec"),
    "spec_from_dict": ("steadyfit.spec", "spec_from_dict"),
    "write_run": ("steadyfit.report.runfolder", "write_run"),
    "InputError": ("steadyfit.errors", "InputError"),
    "FORM_KEYS": ("steadyfit.equations", "FORM_KEYS"),
    "EstimationError": ("steadyfit.errors", "EstimationError"),
    "Findings": ("steadyfit.findings", "Findings"),
    "EquationFindings": ("steadyfit.findings", "EquationFindings"),
    "Estimate": ("steadyfit.findings", "Estimate"),
    "TestResult": ("steadyfit.findings", "TestResult"),
    "ShareVerdict": ("steadyfit.findings", "ShareVerdict"),
    "MeasuredShare": ("steadyfit.findings", "MeasuredShare"),
    "AnchorCheck": ("steadyfit.findings", "AnchorCheck"),
    "compare_runs": ("steadyfit.compare", "compare_runs"),
    "render_text": ("steadyfit.report.text", "render_text"),
    "all_tables": ("steadyfit.report.tables", "all_tables"),
}

__all__ = sorted([*_EXPORTS, "__version__"])


def __dir__() -> list[str]:
    return sorted({*__all__, "__doc__", "__name__", "__path__", "__file__"})


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        import importlib

        module, attr = _EXPORTS[name]
        return getattr(importlib.import_module(module), attr)
    raise AttributeError(f"module 'steadyfit' has no attribute '{name}'")
