"""Files in and out: TOML documents, audio (whole and streamed), hashes, atomic writes.

Everything that touches the disk for the library lives here, so the physics
modules stay pure and every reader refuses bad files with one line.
"""
