"""Sphinx configuration: the API reference, generated from the docstrings (numpy style)."""

import os
import sys

sys.path.insert(0, os.path.abspath(".."))

project = "render"
author = "the render authors"
extensions = ["sphinx.ext.autodoc", "sphinx.ext.napoleon"]
napoleon_google_docstring = False
napoleon_numpy_docstring = True
napoleon_use_rtype = False
napoleon_use_ivar = True  # "Attributes" as fields of the class, not separate entries
autodoc_member_order = "bysource"
autodoc_typehints = "description"
autodoc_default_options = {"members": True, "undoc-members": False}
nitpicky = False
exclude_patterns = ["_build", "drafts"]
html_theme = "alabaster"
