"""The ``render`` subcommands: name -> (module, attribute, one-line help)."""

# command name -> (module, attribute, one-line help)
COMMANDS = {
    "clips": ("render.cli.clips", "clips_command", "Render one clip per design through one dry signal and rig (the main job)."),
    "bias": ("render.cli.bias", "bias_command", "Clipping as the bias divider is unbalanced or the battery runs down."),
    "blind": ("render.cli.blind", "blind_command", "Build a blind ABX or preference session from two designs."),
    "listen": ("render.cli.listen", "listen_command", "Serve a blind session to the browser on 127.0.0.1."),
    "score": ("render.cli.score", "score_command", "Score a finished blind session: ABX p-value or preferences."),
    "check": ("render.cli.check", "check_command", "Validate design files and print their derived values."),
    "noise": ("render.cli.noise", "noise_command", "Noise floor at the amp input: density, totals, A-weighted, SNR, with the passive reference."),
    "unvoice": ("render.cli.unvoice", "unvoice_command", "Estimate the string velocity behind a passive-pickup recording (DI), to drive any design."),
    "response": ("render.cli.response", "response_command", "Small-signal response from string velocity to the amp input."),
    "dry": ("render.cli.dry", "dry_command", "Preview a phrase's string velocity as a WAV."),
    "fit": ("render.cli.fit", "fit_command", "Search buyable part values that meet stated aims."),
    "hum": ("render.cli.hum", "hum_command", "Hum cancellation per mains harmonic, with a tolerance Monte Carlo."),
    "sense": ("render.cli.sense", "sense_command", "What a design's construction senses: string balance, sensing function, bend dropout, H2/H3."),
    "watch": ("render.cli.watch", "watch_command", "Render designs again as their files are saved, on a comparison page served on 127.0.0.1."),
    "netlist": ("render.cli.netlist", "netlist_command", "Write a design and its rig as a SPICE netlist."),
    "coil": ("render.cli.coil", "coil_command", "Each coil's impedance and self-resonance (render coil MODEL), or fit a measured coil (render coil fit FILE)."),
}
