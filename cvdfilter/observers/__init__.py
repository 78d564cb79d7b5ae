"""Observers: cone fundamentals, the CIE 2006 model, anomalous and dichromatic observers, spaces."""
