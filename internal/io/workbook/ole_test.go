package workbook
