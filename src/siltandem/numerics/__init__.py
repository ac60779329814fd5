"""Root finders and inverse-law tables shared by the laws and the solver (no physics, no files)."""
