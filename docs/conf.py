"""Sphinx configuration of the ttvkit documentation."""

import os
import sys

sys.path.insert(0, os.path.abspath(".."))

from ttvkit import __version__  # noqa: E402

project = "ttvkit"
author = "ttvkit developers"
release = version = __version__
extensions = ["sphinx.ext.autodoc", "sphinx.ext.autosummary", "numpydoc", "sphinx.ext.mathjax"]
autosummary_generate = False
numpydoc_show_class_members = False
numpydoc_validation_checks = set()
autodoc_default_options = {"members": True, "undoc-members": False, "show-inheritance": False}
autodoc_member_order = "bysource"
exclude_patterns = ["_build"]
html_theme = "alabaster"
suppress_warnings = ["ref.citation"]
