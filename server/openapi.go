package server

import _ "embed"

// openAPIDocument is the hand-written OpenAPI 3.1 description of every
// route, served at /api/openapi.json. TestEveryRouteDocumented walks the
// router and fails on any undocumented route.
//
//go:embed openapi.json
var openAPIDocument []byte
