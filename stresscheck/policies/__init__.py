"""Built-in derating policies (TOML packs, each rule with its source)."""
