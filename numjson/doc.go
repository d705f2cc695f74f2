// Package numjson holds the one rule by which ridgeflank writes numbers into JSON and CSV
// answers: seven significant digits, and NaN or ±Inf as null (JSON) or an empty cell (CSV).
package numjson
