"""The reviewer's workbook of a built scorecard (an .xlsx file)."""
