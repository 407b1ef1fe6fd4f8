"""Sphinx configuration for lamina's documentation.

Build from the repository root with lamina importable (installed, or the extension built in
place and ``PYTHONPATH=src``)::

    python -m sphinx -W --keep-going -b html docs docs/_build/html

The build never uses the network: there is no intersphinx (no inventories of numpy, scipy,
xarray or dask can be had offline), so references to those packages are plain text.
"""

from __future__ import annotations

import importlib
import os
import subprocess
import sys
from pathlib import Path

import matplotlib

matplotlib.use("Agg")  # the gallery and the geometry drawing render without a display

import lamina  # noqa: E402  (after the backend choice)

DOCS = Path(__file__).resolve().parent
ROOT = DOCS.parent

project = "lamina"
author = "the lamina developers"
copyright = "2026, the lamina developers"  # noqa: A001  (Sphinx's name)
release = lamina.__version__
version = release

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.autosummary",
    "sphinx.ext.mathjax",
    "numpydoc",
    "myst_parser",
    "sphinx_gallery.gen_gallery",
    "matplotlib.sphinxext.plot_directive",
]

source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
exclude_patterns = ["_build", "_generated", "**/GALLERY_HEADER.rst", "api/index.txt"]
templates_path = ["_templates"]
html_theme = "alabaster"
html_theme_options = {"description": "discrete-ordinates radiative transfer", "fixed_sidebar": True}

# --- API reference -------------------------------------------------------------------------
# The public modules. Modules that are being written (surfaces, planets) join the reference
# as soon as they import: the API index is written from this list at every build.
PUBLIC_MODULES = [
    "lamina",
    "lamina.phase",
    "lamina.planck",
    "lamina.mie",
    "lamina.quadrature",
    "lamina.geometry",
    "lamina.scenario",
    "lamina.io",
    "lamina.plotting",
    "lamina.validation",
    "lamina.spherical",
]
UPCOMING_MODULES = ["lamina.surface", "lamina.planet", "lamina.polarization"]


def _importable(name: str) -> bool:
    try:
        importlib.import_module(name)
    except ImportError:
        return False
    return True


def _write_api_index() -> None:
    modules = PUBLIC_MODULES + [name for name in UPCOMING_MODULES if _importable(name)]
    template = (DOCS / "api" / "index.txt").read_text(encoding="utf-8")
    text = template.replace("{modules}", "\n".join(f"   {name}" for name in modules))
    target = DOCS / "api" / "index.rst"
    if not target.exists() or target.read_text(encoding="utf-8") != text:
        target.write_text(text, encoding="utf-8")


_write_api_index()

autosummary_generate = True
autosummary_ignore_module_all = False  # a module's __all__ is its public face
autosummary_imported_members = False
autodoc_default_options = {"member-order": "bysource"}
autodoc_typehints = "none"  # numpydoc's Parameters sections already give the types
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False

# --- generated pages -----------------------------------------------------------------------
# The forward-peak accuracy table is computed at every build by the project's own script
# (about two seconds), so the page can never drift from what the solver does.
_GENERATED = DOCS / "_generated"
_GENERATED.mkdir(exist_ok=True)
_table = subprocess.run(
    [sys.executable, str(ROOT / "validation" / "forward_peak_table.py")],
    check=True, capture_output=True, text=True,
    env={**os.environ, "OPENBLAS_NUM_THREADS": os.environ.get("OPENBLAS_NUM_THREADS", "1")},
).stdout
(_GENERATED / "forward_peak_table.md").write_text(_table, encoding="utf-8")

# --- Markdown ------------------------------------------------------------------------------
myst_enable_extensions = ["dollarmath"]
myst_heading_anchors = 3  # the validation report links to its own case headings

# --- gallery -------------------------------------------------------------------------------
sphinx_gallery_conf = {
    "examples_dirs": "examples",
    "gallery_dirs": "auto_examples",
    "filename_pattern": r"plot_",
    "download_all_examples": False,
    "remove_config_comments": True,
    "within_subsection_order": "FileNameSortKey",
    "image_scrapers": ("matplotlib",),
    "reset_modules": ("matplotlib",),
    "write_computation_times": False,
}

# --- matplotlib plot directive (the geometry drawing) --------------------------------------
plot_include_source = False
plot_html_show_source_link = False
plot_html_show_formats = False
plot_formats = [("png", 120)]
