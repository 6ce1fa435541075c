"""CLI commands beyond generate/config/inspect, one module each (see generator.cli)."""
