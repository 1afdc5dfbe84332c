"""Method of moments: segment integrals, the operator (near and far rules, matrix entries and
point potentials), assembly and the linear solve."""
