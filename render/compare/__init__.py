"""The comparison page: every design of a run on one page, heard at the same playhead.

A run folder's ``index.html`` opens from the file system with no server and
no network. Browsers refuse ``fetch`` of ``file://`` URLs, so the page
carries what it needs itself: its data (the summary, each design's values,
spectrum and response, the spectrogram strips as PNG data URIs) inline, and
the clips as base64 WAVs in the sibling script ``index-clips.js``. The
clips are decoded to AudioBuffers on one AudioContext and all play at once
in lockstep, each through its own gain; picking a design moves the gains
(a short crossfade), so the switch lands on the very same sample.

- :mod:`render.compare.assets` makes one clip's page assets (its 16-bit
  copy, true peak, spectrum curve, spectrogram strip);
- :mod:`render.compare.page` builds the page's data and its two files;
- :mod:`render.compare.folders` builds the page of a ``render clips`` or
  ``render bias`` folder from what the run wrote;
- :mod:`render.compare.server` serves the live page of ``render watch``.

The page's HTML, CSS and JavaScript are package data in
``render/compare/static/``.
"""
