"""Page layouts (TOML) for `scorecard render`; installed as the package `scorecard.layouts`."""
