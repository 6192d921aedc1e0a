"""Workbooks written for people: profile tables now, the finance workbook later."""
