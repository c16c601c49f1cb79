"""Energy terms: each module evaluates one family of interactions, one energy per interaction."""
