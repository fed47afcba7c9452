"""perturbations layer."""
