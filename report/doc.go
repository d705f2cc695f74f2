// Package report renders the check of a survey plan as a printable report: PDF pages, or one page as PNG.
package report
