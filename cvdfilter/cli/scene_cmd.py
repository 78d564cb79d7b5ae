"""``cvdfilter scene``: write a synthetic hyperspectral reflectance scene (a natural-scene stand-in)."""

from __future__ import annotations

import typer

from .common import fail


def register(app: typer.Typer) -> None:
    @app.command("scene")
    def scene(
        output: str = typer.Option(..., "--output", "-o", help="Output cube, .npz."),
        seed: int = typer.Option(0, "--seed", help="Random seed (same seed, same scene)."),
        height: int = typer.Option(256, "--height", help="Height, pixels."),
        width: int = typer.Option(256, "--width", help="Width, pixels."),
        bands: int = typer.Option(31, "--bands", help="Bands evenly spaced over 400-700 nm."),
    ) -> None:
        """Write a SYNTHETIC reflectance cube with natural-like spectra and structure (not a photograph).

        Example: cvdfilter scene --seed 3 -o scene.npz

        The cube reads back in `cvdfilter render` and in discernible-colour counts. See docs/metrics.md.
        """
        from ..errors import InputError
        from ..spectra.scenes import synthetic_scene, write_scene

        try:
            cube = synthetic_scene(seed=seed, shape=(height, width), bands=bands)
            write_scene(output, cube, seed=seed)
        except InputError as exc:
            fail(exc)
        typer.echo(f"wrote {output}: synthetic reflectance scene, seed {seed}, {height}x{width} pixels, "
                   f"{bands} bands {cube.wavelengths[0]:g}-{cube.wavelengths[-1]:g} nm")
