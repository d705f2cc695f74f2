// Package fault holds the typed errors every layer returns for a request it cannot answer: bad
// input, a documented limit exceeded, nothing found, no data; each way in maps them once.
package fault
