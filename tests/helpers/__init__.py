"""Test helpers for the reliability and security tests (generators, contracts, reports)."""
