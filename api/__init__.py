"""The local HTTP service (built in a later step)."""
