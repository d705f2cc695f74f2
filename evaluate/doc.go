// Package evaluate answers questions about stored datasets: values at points, along tracks, over areas and regions, as map tiles and as files.
package evaluate
