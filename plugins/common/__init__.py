"""Machinery shared by several solver plugins (local search kernels, helpers)."""
