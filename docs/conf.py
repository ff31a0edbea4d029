"""Sphinx configuration of the hrstage documentation (``make docs`` builds it into docs/_build/html).

The narrative pages are the Markdown files of this folder, read by our own extension
``_ext/hrstage_markdown.py``; the API reference is generated from the numpydoc docstrings; the
gallery runs the scripts of ``examples/`` at build time with matplotlib's plot directive.
"""

import os
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE / "_ext"))
os.environ.setdefault("MPLBACKEND", "Agg")

from hrstage import __version__  # noqa: E402  (the installed package being documented)

project = "hrstage"
author = "the hrstage authors"
copyright = "the hrstage authors"
version = release = __version__

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.mathjax",
    "numpydoc",
    "hrstage_markdown",
    "hrstage_gallery",
]

root_doc = "index"
exclude_patterns = ["_build", "_ext", "_generated", "**/__pycache__"]
templates_path = []
html_static_path = []
html_theme = "alabaster"
html_title = f"hrstage {version}"
html_theme_options = {"description": "Evolutionary-stage labels for catalogue stars", "fixed_sidebar": False}
# the site must build with no network: no intersphinx, no remote images
nitpicky = False
suppress_warnings = []

# API reference
autodoc_default_options = {"members": True, "undoc-members": False, "show-inheritance": False}
autodoc_member_order = "bysource"
autodoc_typehints = "none"
autodoc_mock_imports = ["dask", "distributed", "dust_extinction", "tqdm"]
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_attributes_as_param_list = False
numpydoc_xref_param_type = False

# gallery: every example script is run when the page is built (our extension _ext/hrstage_gallery.py)
hrstage_examples_dir = "../examples"
hrstage_examples_dpi = 90
