"""``render watch MODEL…``: render, serve the comparison page on 127.0.0.1, and render again on every save.

Prints the address, opens the browser (unless ``--no-browser``) and a line
per re-render or refused file. Ctrl-C, SIGTERM and SIGHUP stop the watcher
and the server; no clip is written to disk (a design with a ``[construction]``
keeps its field solve in the cache folder, :mod:`render.io.cache`).
"""

from __future__ import annotations

import click

from ..dry.phrase import MIN_SECONDS
from .options import friendly, rig_option, sample_rate_option
from .values import Finite, InFile, Seed

CAUTION = "Start playback at a low volume and raise it slowly: the page starts 20 dB down, but clipped clips stay loud."


@click.command("watch")
@click.argument("models", nargs=-1, required=True, type=InFile())
@click.option("--dry", "dry_path", type=InFile(), default=None, help="Phrase (.toml) or recorded velocity file (default: dry_signals/default.toml here, else the copy shipped with render).")
@rig_option
@click.option("--seconds", type=Finite(MIN_SECONDS, 600, unit="s"), default=None, help="Length of every clip (default: the dry signal's own).")
@sample_rate_option
@click.option("--hum/--no-hum", default=True, show_default=True, help="Add the rig's mains hum field.")
@click.option("--seed", type=Seed(), default=0, show_default=True, help="Seed for the phrase's small variations.")
@click.option("--port", default=0, show_default=True, type=int, help="Port on 127.0.0.1 (0 picks a free one).")
@click.option("--no-browser", is_flag=True, help="Only print the address; do not open a browser.")
@friendly
def watch_command(models, dry_path, rig_path, seconds, sample_rate, hum, seed, port, no_browser):
    """Render MODEL… and serve the comparison page; render a design again each time its file, the rig or the phrase is saved.

    The page swaps the new clip in at the same playhead and keeps the
    previous version as "before" (key B flips between them). A save that
    does not load shows its one-line message on the page and here, and the
    last good clip plays on.
    """
    from ..clip import RenderSettings
    from ..compare.server import LiveServer
    from ..runs.watch import WatchRun, follow_changes

    def say(line: str) -> None:
        click.echo(line, err=line.startswith(("Error: ", "warning: ")))

    settings = RenderSettings(sample_rate=sample_rate, seconds=seconds, seed=seed, hum=hum)
    run = WatchRun(models, dry=dry_path, rig=rig_path, settings=settings)
    server = LiveServer(run.board, page=run.page(), port=port)  # the port is refused before any render
    try:
        for line in run.start().lines:  # a stop before the page is served is a stopped run: "Aborted!", exit 1
            say(line)
        server.start_thread()
        click.echo(f"serving the comparison page at {server.url}")
        try:
            click.echo(f"  watching {len(run.files)} files; Ctrl-C stops")
            click.echo(f"  {CAUTION}")
            if not no_browser:
                import webbrowser

                if not webbrowser.open(server.url):
                    click.echo("  (no browser could be opened: open the address yourself)")
            follow_changes(run, notify=say)
        except KeyboardInterrupt:
            pass  # the page was served: stopping is how watch ends (exit 0, as render listen)
    finally:
        server.stop()
    click.echo("stopped")
