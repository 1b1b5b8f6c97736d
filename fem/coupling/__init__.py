"""Electromechanical coupling: the displacement-controlled branch through the pull-in fold
(branch) and its plate FE system (plate)."""
