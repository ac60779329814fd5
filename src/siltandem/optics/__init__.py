"""Light through the stack: photocurrents of step absorbers, measured EQEs and layer optics."""
