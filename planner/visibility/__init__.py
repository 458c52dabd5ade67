"""Stage 4, visibility: nights and dark time per site, and the observable windows within them."""
