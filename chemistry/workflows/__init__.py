"""Workflow layer: orchestration that runs analyses and writes files (the report bundle,
the demo, the parameter atlas with its executors and resumable chunks)."""
