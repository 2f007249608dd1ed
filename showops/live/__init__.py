"""The live show: the cue runner's state machine and the log's hash chain (pure)."""
