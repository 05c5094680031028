"""Small-signal model of the pickup and its preamp, as rational transfer functions."""
