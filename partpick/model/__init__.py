"""Pure engineering functions of partpick, split by physical domain (no IO)."""
