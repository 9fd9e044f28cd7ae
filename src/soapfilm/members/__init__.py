"""Using a section in a part: bars and shafts in torsion.

``shaft``      single-section checks and stepped shafts in Saint-Venant torsion
``shaftfile``  shaft files (TOML) and section specifications
``shaftplot``  the torque and twist diagram along a shaft
"""
