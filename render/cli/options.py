"""Options and helpers shared by the subcommands."""

from __future__ import annotations

import functools
import glob
import json
import sys
import time
from pathlib import Path

import click

from ..errors import InputError

MODELS_DIR = Path("models")


def friendly(fn):
    """Turn InputError into one line on stderr and exit code 1 (no traceback)."""

    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        try:
            return fn(*args, **kwargs)
        except InputError as exc:
            raise click.ClickException(str(exc)) from None

    return wrapper


rig_option = click.option(
    "--rig",
    "rig_path",
    type=click.Path(dir_okay=False),
    default=None,
    help="Rig file (TOML with [rig] and/or [hum]); replaces each design's own tables.",
)
overwrite_option = click.option("--overwrite", is_flag=True, help="Replace output files that already exist.")


def json_option(help_text="Write the results as JSON to FILE ('-' for standard output)."):
    return click.option("--json", "json_path", type=click.Path(dir_okay=False), default=None, help=help_text)


def load_designs(paths, rig_path=None):
    """Designs from the given files (default: every models/*.toml), each with the rig applied."""
    from ..design import apply_rig, load_design, load_rig

    if not paths:
        paths = sorted(glob.glob(str(MODELS_DIR / "*.toml")))
        if not paths:
            raise InputError(f"{MODELS_DIR}/: no *.toml design files here; pass design files or run from the project folder")
    rig = load_rig(rig_path) if rig_path else None
    return [apply_rig(load_design(p), rig) for p in paths], rig


def emit_json(path, payload, *, overwrite):
    """Write JSON to ``path`` atomically, or to stdout for '-'."""
    from ..io.atomic import write_text

    text = json.dumps(payload, indent=2, sort_keys=False, allow_nan=False) + "\n"
    if path == "-":
        sys.stdout.write(text)
    else:
        write_text(path, text, overwrite=overwrite)


def check_new(paths, overwrite):
    """Refuse up front if any output exists and --overwrite was not given (nothing is written)."""
    for p in paths:
        if p and p != "-" and Path(p).exists() and not overwrite:
            raise InputError(f"{p}: exists; pass --overwrite to replace it or choose another name")


def make_folder(path) -> Path:
    """Create an output folder (and its parents); an OSError becomes one line."""
    p = Path(path)
    try:
        p.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise InputError(f"--out={p}: cannot create it ({e.strerror}); choose another folder") from None
    return p


def new_run_folder(root: Path, prefix: str = "clips") -> Path:
    stamp = time.strftime("%Y%m%d-%H%M%S")
    out = root / f"{prefix}-{stamp}"
    k = 2
    while out.exists():
        out = root / f"{prefix}-{stamp}-{k}"
        k += 1
    return out


def prepare_out(out_dir, overwrite, prefix="clips") -> Path:
    """The output folder: refused if it exists and holds files, unless --overwrite."""
    if out_dir is None:
        return new_run_folder(Path("outputs"), prefix)
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputError(f"--out={out}: is a file; give a folder")
    if out.exists() and any(out.iterdir()) and not overwrite:
        raise InputError(f"--out={out}: folder exists and is not empty; pass --overwrite to replace its files or choose another folder")
    return out
