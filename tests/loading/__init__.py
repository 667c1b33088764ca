"""Tests of the loading stage: manifests, data files, server queries, transforms."""
