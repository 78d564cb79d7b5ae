"""Input and output: spectra files, images, cubes and atomic writes."""
