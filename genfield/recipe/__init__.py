"""The scene language: parse recipes, check them, and draw concrete scenes for (seed, i)."""
