// Package jobs holds the job kinds, arguments, handlers and statuses that the ways in share; the
// durable queue that runs them is in jobs/queue.
package jobs
