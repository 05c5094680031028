"""Blind listening sessions: build, serve, score.

A session is a folder::

    SESSION/
      public/plan.json        what the page needs: method, trials, clip names
      public/<random>.wav     the clips, one file per clip slot of every trial
      private/key.json        which clip is which design, seeds, hashes, gains
      answers.jsonl           one JSON line per answer, appended and fsynced
      listen.lock             held (flock) by the one server writing answers

- :mod:`render.listening.build` renders nothing itself: it takes two rendered
  signals, matches their loudness, draws the trials and writes the folder.
- :mod:`render.listening.answers` is the append-only answer log.
- :mod:`render.listening.server` is the loopback HTTP server and
  :mod:`render.listening.page` reads the page it serves (HTML, CSS and
  JavaScript files in ``render/listening/static/``, package data).
- :mod:`render.listening.score` opens the key once every trial is answered.

The runs behind the commands are :func:`render.runs.blind.build_blind_session`
(render both designs and build a session) and
:func:`render.runs.score.score_blind_session` (score it and draw the plot).

Nothing that is served (the page, the plan, the clips' names, bytes other
than the audio, sizes and headers) depends on which design a clip holds:
clip names come from :mod:`secrets`, not from the seed, and the server does
not read the key until the last answer is in. Every clip file carries its own
dither below the 24-bit step (:mod:`render.listening.dither`), so no two clip
files are the same bytes; the decoded audio of X still matches A or B to
within that dither, which a listener who analyses the files can find.
"""
