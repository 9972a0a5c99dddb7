"""The invented demo league: its data, its pages, a loopback server, and the demo run."""
