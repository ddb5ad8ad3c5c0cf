"""Review policy: rule sets, project config, waivers, baselines and the gate that picks the exit code."""
