"""Uncertainty from quality-control and validation data (the top-down approach of Nordtest TR 537 and
ISO 11352): level dependence, detection limits, the check of a budget against QC data, and proficiency scores.

Each module computes and returns frozen results; reading and printing live in :mod:`ucalc.qc.data` and
:mod:`ucalc.reports.qc`.
"""
