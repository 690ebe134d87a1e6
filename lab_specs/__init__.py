"""Lab spec files shipped with labcheck (TOML; see docs/spec.md)."""
