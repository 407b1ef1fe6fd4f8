"""``import lamina`` makes the package's modules available (issue 12).

Checked in a fresh interpreter (a subprocess), since within the test session other tests
have long since imported every submodule. Reference: the module names the README itself
uses (``lamina.<name>``), read from README.md, plus those the issue names.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import lamina

README = Path(__file__).parents[1] / "README.md"
# the modules of the package that hold functions a user calls
MODULES = ["io", "mie", "phase", "planck", "scenario", "progress", "quadrature", "plotting",
           "validation"]


def _fresh(code: str) -> subprocess.CompletedProcess:
    environment = dict(os.environ)
    environment["PYTHONPATH"] = os.pathsep.join(
        [str(Path(lamina.__file__).parents[1]), *filter(None, [environment.get("PYTHONPATH")])])
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env=environment, timeout=300, check=False)


def test_import_lamina_makes_every_module_available():
    readme_names = set(re.findall(r"\blamina\.([a-z_]+)\b", README.read_text()))
    package = Path(lamina.__file__).parent
    # lamina.solve is the function (the README calls it), not the module of that name
    readme_modules = sorted(name for name in readme_names
                            if ((package / f"{name}.py").exists() or (package / name).is_dir())
                            and not callable(getattr(lamina, name, None)))
    assert {"io", "phase", "scenario"} <= set(readme_modules)  # the README does name them
    names = sorted(set(MODULES) | set(readme_modules))
    code = ("import sys, types, lamina\n"
            "light = 'matplotlib' not in sys.modules\n"
            f"for name in {names!r}:\n"
            "    assert isinstance(getattr(lamina, name), types.ModuleType), name\n"
            "    assert name in lamina.__all__, name\n"
            "lamina.io.write_netcdf; lamina.mie.lognormal_optics; lamina.plotting.spectrum\n"
            "print(light)\n")
    completed = _fresh(code)
    assert completed.returncode == 0, completed.stderr
    # plotting is imported on first use: a solver-only session does not load matplotlib
    assert completed.stdout.strip() == "True"


def test_unknown_attribute_is_still_an_attribute_error():
    completed = _fresh("import lamina\ntry:\n    lamina.no_such_module\n"
                       "except AttributeError as error:\n    print(error)\n")
    assert completed.stdout.strip() == "module 'lamina' has no attribute 'no_such_module'"
