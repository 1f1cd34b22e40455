"""One module per verb; each exports `command` (a click command). `scorecard.cli` discovers them."""
