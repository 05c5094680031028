"""What a JSON record names of the design it is about, beyond its name and path.

One helper for every record (``render clips``, ``bias``, ``blind``'s key, ``check``,
``hum``, ``noise``, ``sense``, ``coil``, ``unvoice``), so they carry the same keys
in the same layout: the design file's SHA-256 and each measured coil's file and
SHA-256 (the bytes its fit was made from).
"""

from __future__ import annotations

from .coil_impedance import measured_files


def design_provenance(design) -> dict:
    """``{"design_sha256", "design_changes", "coil_measurements": [{"coil", "file", "sha256"}]}`` of a loaded design.

    ``design_sha256`` is the hex SHA-256 of the design file's bytes as loaded ("" for a design
    built in memory); ``design_changes`` maps each ``"table.key"`` that :func:`render.with_values`
    changed to its value as given (empty for the file as it is); ``coil_measurements`` lists each
    measured coil (``file`` as the design gives it, relative to the design file's folder), empty without one.
    """
    return {"design_sha256": design.sha256, "design_changes": dict(getattr(design, "changes", ())), "coil_measurements": measured_files(design)}


def rig_provenance(rig) -> dict:
    """``{"file", "sha256"}`` of the rig file a run used (a :class:`render.design.model.RigFile`), or, without one,
    ``{"file": None, "from": …}``: each design's own [rig] or the defaults."""
    return {"file": rig.source, "sha256": rig.sha256} if rig else {"file": None, "from": "each design's own [rig] or the defaults"}
