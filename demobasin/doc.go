// Package demobasin generates, writes and installs the "Quillon Basin (SYNTHETIC)", an invented
// ocean basin with known swell, seamounts and sediment, used as demo and test data.
package demobasin
