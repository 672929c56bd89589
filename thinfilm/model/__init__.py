"""The model: lattices and their one neighbour description, parameters in reduced units."""
