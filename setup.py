"""Package list for setuptools: everything under src/ plus the two top-level folders that
ship inside the package (see package-dir in pyproject.toml)."""
from setuptools import find_packages, setup

setup(packages=find_packages("src") + ["sharpzone.migrations", "sharpzone.seed_data"])
