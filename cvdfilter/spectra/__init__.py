"""Spectra: the wavelength grid, filters, illuminants and surface sets."""
