"""Reference tables the graph tests share: facts of amino-acid chemistry and textbook coupling ranges,
written down once from their sources (not from the package)."""

# Gamma carbons by PDB/IUPAC atom names and their chemistry: Markley et al., Pure Appl. Chem. 70, 117 (1998)
# nomenclature and the amino-acid structures (common practice). Thr has OG1 and CG2: one gamma carbon.
GAMMA_CARBONS_BY_RESIDUE = {
    "A": {},
    "S": {},
    "C": {},
    "G": {},
    "R": {"CG": "aliphatic"},
    "Q": {"CG": "aliphatic"},
    "E": {"CG": "aliphatic"},
    "L": {"CG": "aliphatic"},
    "K": {"CG": "aliphatic"},
    "M": {"CG": "aliphatic"},
    "P": {"CG": "aliphatic"},
    "I": {"CG1": "aliphatic", "CG2": "aliphatic"},
    "V": {"CG1": "aliphatic", "CG2": "aliphatic"},
    "T": {"CG2": "aliphatic"},
    "F": {"CG": "aromatic"},
    "Y": {"CG": "aromatic"},
    "W": {"CG": "aromatic"},
    "H": {"CG": "aromatic"},
    "D": {"CG": "carbonyl"},
    "N": {"CG": "carbonyl"},
}

# Textbook ranges of the backbone couplings [Hz], signed. Cavanagh, Fairbrother, Palmer, Rance & Skelton,
# Protein NMR Spectroscopy, 2nd ed. (2007), coupling figure; Sattler, Schleucher & Griesinger, Prog. NMR
# Spectrosc. 34, 93 (1999), Fig. 1; Delaglio, Torchia & Bax, J. Biomol. NMR 1, 439 (1991) for N-CA
# (all from memory). CB-CG: one-bond C-C couplings, Krivdin & Kalabin, Prog. NMR Spectrosc. 21, 293 (1989)
# (from memory): sp3-sp3 about 35 Hz, sp3-aromatic 44-50 Hz, sp3-carboxyl 50-57 Hz.
TEXTBOOK_RANGE_HZ = {
    "1J(N,H)": (-95.0, -89.0),
    "1J(N,C)": (-17.0, -13.0),
    "1J(N,CA)": (-13.0, -7.0),
    "2J(N,CA(i-1))": (-9.0, -4.0),
    "1J(CA,C)": (50.0, 58.0),
    "1J(CA,CB)": (30.0, 40.0),
    "1J(CA,HA)": (130.0, 150.0),
    "1J(CB,HB)": (120.0, 150.0),
    "1J(CB,CG)[aliphatic]": (32.0, 38.0),
    "1J(CB,CG)[aromatic]": (42.0, 52.0),
    "1J(CB,CG)[carbonyl]": (48.0, 57.0),
    "3J(H,HA)": (1.0, 11.0),  # Karplus range of 3J(HN,HA); Wüthrich, NMR of Proteins and Nucleic Acids (1986)
}
