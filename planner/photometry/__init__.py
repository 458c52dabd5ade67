"""Stage 3, photometry: sky brightness, the CCD equation, coma apertures and Afρ, exposure tables."""
