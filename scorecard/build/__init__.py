"""The build pipeline: from a validated config and an engine to a frozen build result."""
