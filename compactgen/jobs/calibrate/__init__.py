"""Re-calibration from measured data: ingest, forward models, joint fit, fitted card, report."""
