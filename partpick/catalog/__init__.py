"""The user's catalogue: CSV files in, validated typed DataFrames out."""

from partpick.catalog.loader import Catalog, default_catalog_dir, demo_catalog_dir, load_catalog

__all__ = ["Catalog", "default_catalog_dir", "demo_catalog_dir", "load_catalog"]
