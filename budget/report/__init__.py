"""Reports: pure writers that take results and never compute uncertainty."""
