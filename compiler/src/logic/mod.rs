//! The hardware port: state assignment, excitation, two-level minimization, NAND/NOR.
