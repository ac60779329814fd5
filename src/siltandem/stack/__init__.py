"""Stack files: the TOML schema (one for file keys, options and arguments), layers, placements and
which files a stack reads. Validation only, no physics.
"""
