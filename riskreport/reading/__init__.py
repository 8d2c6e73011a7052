"""Reading the inputs: the TOML configuration, the forecast and outcome tables, periods, the dense panel of what was knowable, and the checks before any fitting."""
