"""The solvent library: the packaged table, name lookup, candidate pools and hazard facts."""
