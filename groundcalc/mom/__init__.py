"""Method of moments: segment-pair integrals, matrix assembly and the linear solve."""
