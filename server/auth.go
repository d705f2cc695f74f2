package server

import (
	"context"
	"errors"
	"net/http"
	"strings"

	"ridgeflank/store"
)

// Roles, re-exported for handlers: reader < editor < admin.
const (
	RoleReader = store.RoleReader
	RoleEditor = store.RoleEditor
	RoleAdmin  = store.RoleAdmin
)

// principal is who made a request: an anonymous caller (Token nil) or the
// holder of a valid token.
type principal struct {
	Token *store.Token
}

func principalOf(ctx context.Context) principal {
	p, _ := ctx.Value(ctxPrincipal).(principal)
	return p
}

// bearer extracts the token of an "Authorization: Bearer <token>" header,
// or, for GET and HEAD only, of an access_token query parameter (RFC 6750
// §2.3), so that map tiles and image links work when reads need a token.
func bearer(r *http.Request) (string, bool) {
	h := r.Header.Get("Authorization")
	if h == "" {
		if r.Method == http.MethodGet || r.Method == http.MethodHead {
			if t := queryOf(r).Get("access_token"); t != "" {
				return t, true
			}
		}
		return "", false
	}
	scheme, tok, ok := strings.Cut(h, " ")
	if !ok || !strings.EqualFold(scheme, "Bearer") || strings.TrimSpace(tok) == "" {
		return "", true
	}
	return strings.TrimSpace(tok), true
}

// authenticate resolves a bearer token (if any) to a principal. A present
// but unknown, revoked or malformed token is refused with 401 even on
// reads, so clients learn their token is bad. With Config.ReadAuth, reads
// need a token too.
func (s *server) authenticate(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		tok, present := bearer(r)
		var p principal
		if present {
			if tok == "" {
				s.unauthorized(w, r, "the Authorization header must be \"Bearer <token>\"")
				return
			}
			if s.deps.Store == nil {
				s.unauthorized(w, r, "no token store is configured")
				return
			}
			t, err := s.deps.Store.Authenticate(r.Context(), tok)
			if err != nil {
				if errors.Is(err, store.ErrUnauthorized) || errors.Is(err, store.ErrNotFound) || errors.Is(err, store.ErrInvalid) {
					s.unauthorized(w, r, "the bearer token is unknown or revoked")
					return
				}
				writeProblem(w, r, asProblem(err))
				return
			}
			p.Token = &t
		}
		if s.deps.Config.ReadAuth && p.Token == nil && !openPath(r.URL.Path) {
			s.unauthorized(w, r, "this server requires a token for reads: send Authorization: Bearer <token>")
			return
		}
		if p.Token == nil {
			next.ServeHTTP(w, r) // anonymous: the zero principal, as when none is stored
			return
		}
		next.ServeHTTP(w, r.WithContext(context.WithValue(r.Context(), ctxPrincipal, p)))
	})
}

// openPath lists what stays readable without a token even with ReadAuth:
// the API description and the problem catalogue.
func openPath(p string) bool {
	return p == "/api/openapi.json" || strings.HasPrefix(p, "/api/problems")
}

func (s *server) unauthorized(w http.ResponseWriter, r *http.Request, detail string) {
	w.Header().Set("WWW-Authenticate", `Bearer realm="ridgeflank"`)
	writeProblem(w, r, problem(CodeUnauthorized, "%s", detail))
}

// require lets the request through only with a token of at least role need.
func (s *server) require(need store.Role) func(http.Handler) http.Handler {
	return func(next http.Handler) http.Handler {
		return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			p := principalOf(r.Context())
			if p.Token == nil {
				s.unauthorized(w, r, "writing needs a token with role "+string(need)+": send Authorization: Bearer <token>")
				return
			}
			if !p.Token.Role.Allows(need) {
				writeProblem(w, r, problem(CodeForbidden, "this needs role %s; the token has role %s", need, p.Token.Role))
				return
			}
			next.ServeHTTP(w, r)
		})
	}
}

// whoami tells the page whether its token works and what it may do.
func (s *server) whoami(w http.ResponseWriter, r *http.Request) error {
	p := principalOf(r.Context())
	out := map[string]any{"authenticated": p.Token != nil, "read_auth": s.deps.Config.ReadAuth}
	if p.Token != nil {
		out["token_id"] = p.Token.ID
		out["name"] = p.Token.Name
		out["role"] = p.Token.Role
		out["can_write"] = p.Token.Role.Allows(RoleEditor)
	} else {
		out["can_write"] = false
	}
	w.Header().Set("Cache-Control", "no-store")
	return writeJSON(w, http.StatusOK, "", out)
}
