"""The look of femcav's line charts (mode chart, spectrum, probes): the colour-blind-safe
qualitative palette of M. Okabe and K. Ito ("Color Universal Design", 2002; eight colours)
and a marker shape per curve as a second cue."""

PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#F0E442",
           "#000000")
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
