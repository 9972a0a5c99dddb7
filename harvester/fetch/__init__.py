"""Polite fetching: robots.txt gate, per-host pacing, retries, an RFC 9111 cache, hard limits."""
