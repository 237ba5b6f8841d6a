"""Infrastructure every layer may use: the input error, atomic file output, TOML input with
line numbers, the labelled number and the cautions. Nothing here knows about cards."""
