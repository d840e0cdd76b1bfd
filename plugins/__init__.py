"""spinward.plugins: the built-in solver families, each registered through the public hook."""
