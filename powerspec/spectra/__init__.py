"""Stage 2 -- spectra: eigenvalue multisets with exact multiplicities and certified values."""
