// Package colour holds ridgeflank's colour scales, defined once and shared by the PNG map
// renderer and (as JSON) by the browser page's legend.
package colour
