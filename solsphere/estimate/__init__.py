"""Hansen parameters estimated from a structure (SMILES), with measured 95 % intervals.

Needs the optional extra ``solsphere[structure]`` (RDKit; scikit-learn and chemicals
for training and names). :func:`estimate` is the entry point; :func:`plan_from_structure`
chooses a first bench panel for a material known only by its structure;
:func:`read_structures` reads a file of SMILES or names.
"""

from solsphere.estimate.model import Estimate, Estimates, StructureModel, estimate, load_model
from solsphere.estimate.inputs import read_structures, smiles_for_name
from solsphere.estimate.plan import plan_from_structure

__all__ = ["Estimate", "Estimates", "StructureModel", "estimate", "load_model",
           "read_structures", "smiles_for_name", "plan_from_structure"]
