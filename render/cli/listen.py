"""``render listen SESSION``: serve a blind session to the browser, on 127.0.0.1 only.

Prints the URL, opens the browser (unless ``--no-browser``) and records each
answer to SESSION/answers.jsonl the moment it is given. Stop with Ctrl-C;
run it again later to resume where the listener left off. Only one server
may write a session at a time.
"""

from __future__ import annotations

import click

from .options import friendly


@click.command("listen")
@click.argument("session", type=click.Path(file_okay=False))
@click.option("--port", default=0, show_default=True, type=int, help="Port on 127.0.0.1 (0 picks a free one).")
@click.option("--no-browser", is_flag=True, help="Only print the URL; do not open a browser.")
@friendly
def listen_command(session, port, no_browser):
    """Serve the blind listening session SESSION on 127.0.0.1."""
    from ..listening.server import ListeningServer

    server = ListeningServer(session, port=port, notify=click.echo)
    try:
        done, total = len(server.log.answers), server.trials
        click.echo(f"serving {session} at {server.url}")
        if done == total:
            click.echo(f"  all {total} trials are answered; run `render score {session}`")
        else:
            click.echo(f"  {done} of {total} trials answered; Ctrl-C stops, running this again resumes")
        click.echo("  start with the playback volume low: a clipped clip stays loud even when matched")
        if not no_browser:
            import webbrowser

            if not webbrowser.open(server.url):
                click.echo("  (no browser could be opened: open the URL yourself)")
        server.serve_forever(poll_interval=0.25)
    except KeyboardInterrupt:
        pass
    finally:
        server.stop()
    answered = len(server.log.answers)  # the log keeps an answer only once it is on disk
    click.echo(f"stopped; {answered} of {server.trials} trials answered")
