"""Built-in demo site (invented project, firm and people)."""
