// Package jobs is ridgeflank's durable job queue (grid imports, large exports) on River, kept in
// the same database as the store so a restart loses no accepted job.
package jobs
