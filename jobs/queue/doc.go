// Package queue is ridgeflank's durable job queue on River, kept in the store's own database
// (SQLite or PostgreSQL) so that a restart loses no accepted job.
package queue
