"""Controllers that tie background jobs to the views (clash check, model comparison, frames)."""
