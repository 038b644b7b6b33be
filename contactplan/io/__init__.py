"""Readers and writers: CCSDS OEM, tables, calendars, the weekly report."""
