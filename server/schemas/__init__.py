"""Pydantic request/response models; one module per aggregate, units in every field name."""
