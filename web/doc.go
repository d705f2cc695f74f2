// Package web holds the browser page of ridgeflank (a residual-depth review map built with npm and esbuild into dist/) and embeds the built files for the server.
package web
