"""Candidate designs and rigs: the model (:mod:`.model`), its schema (:mod:`.schema`) and its loading (:mod:`.loading`)."""

from .loading import apply_rig, load_design, load_designs, load_rig, parse_design, parse_rig, read_winding
from .model import DEFAULT_HARMONICS, Coil, Design, Feedback, Hum, InputNet, Output, Rig, RigFile, Supply, Winding, design_to_dict
from .provenance import design_provenance
from .schema import DESIGN_TABLES, REQUIRED_TABLES

__all__ = [
    "DEFAULT_HARMONICS",
    "DESIGN_TABLES",
    "REQUIRED_TABLES",
    "Coil",
    "Design",
    "Feedback",
    "Hum",
    "InputNet",
    "Output",
    "Rig",
    "RigFile",
    "Supply",
    "Winding",
    "apply_rig",
    "design_provenance",
    "design_to_dict",
    "load_design",
    "load_designs",
    "load_rig",
    "parse_design",
    "parse_rig",
    "read_winding",
]
