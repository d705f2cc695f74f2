package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"text/tabwriter"
	"time"

	"ridgeflank/store"
)

var tokenCmd = &command{
	Name:    "token",
	Summary: "create, list and revoke API tokens",
	Usage: `Usage: ridgeflank token create --role reader|editor|admin --name NAME [store flags]
       ridgeflank token list [--format table|json] [store flags]
       ridgeflank token revoke ID [store flags]

create prints a new token's secret on stdout. It is shown once: the store keeps
only its SHA-256 hash, so a lost secret cannot be recovered (revoke it and
create another). Send it as "Authorization: Bearer SECRET".
Roles: reader (read everything), editor (also change regions, tracks, grids,
datasets and models), admin (also manage tokens).

list shows every token (never a secret) with its role, times and state.
revoke stops a token from working at once; it stays listed as revoked.

Store flags: --database-url URL for PostgreSQL/PostGIS, otherwise the embedded
store in --data DIR (default ./data). The schema is migrated if needed.

Example: ridgeflank token create --role editor --name "survey planning laptop"`,
}

func init() {
	tokenCmd.Run = runToken
	register(tokenCmd)
}

func runToken(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		return usagef("a subcommand is required: create, list or revoke; run 'ridgeflank token --help' for usage")
	}
	sub, rest := args[0], args[1:]
	fs := newFlags(tokenCmd)
	var loc dbLocationFlags
	loc.define(fs)
	switch sub {
	case "-h", "-help", "--help", "help":
		return parseFlags(ctx, tokenCmd, fs, []string{"--help"}, stdout, false)
	case "create":
		role := fs.String("role", "", "role of the token: reader, editor or admin (required)")
		name := fs.String("name", "", "what the token is for, e.g. who or which machine holds it (required)")
		if err := parseFlags(ctx, tokenCmd, fs, rest, stdout, false); err != nil {
			return err
		}
		if *role == "" || *name == "" {
			return usagef("--role and --name are required, e.g. --role editor --name \"survey laptop\"")
		}
		r, err := store.ParseRole(*role)
		if err != nil {
			return usagef("--role %q is not one of reader, editor, admin", *role)
		}
		s, err := loc.open(ctx, stderr, false)
		if err != nil {
			return err
		}
		defer s.Close()
		tok, secret, err := s.CreateToken(ctx, *name, r)
		if errors.Is(err, store.ErrInvalid) {
			return usagef("%v", err)
		}
		if err != nil {
			return err
		}
		if _, err := fmt.Fprintln(stdout, secret); err != nil {
			return err
		}
		fmt.Fprintf(stderr, "token %s (%s, %q) created; keep the secret above now: it is not shown again.\n", tok.ID, tok.Role, tok.Name)
		return nil
	case "list":
		format := fs.String("format", "table", "output format: table or json")
		if err := parseFlags(ctx, tokenCmd, fs, rest, stdout, false); err != nil {
			return err
		}
		if *format != "table" && *format != "json" {
			return usagef("format %q is not one of table, json", *format)
		}
		s, err := loc.open(ctx, stderr, false)
		if err != nil {
			return err
		}
		defer s.Close()
		toks, err := s.ListTokens(ctx)
		if err != nil {
			return err
		}
		if *format == "json" {
			return writeTokensJSON(stdout, toks)
		}
		return writeTokensTable(stdout, toks)
	case "revoke":
		if err := parseFlags(ctx, tokenCmd, fs, rest, stdout, true); err != nil {
			return err
		}
		if fs.NArg() == 0 {
			return usagef("revoke takes one token id (see 'ridgeflank token list')")
		}
		id := fs.Arg(0)
		// Flags may also follow the id.
		if err := fs.Parse(fs.Args()[1:]); err != nil {
			return usagef("%v; run 'ridgeflank token --help' for usage", err)
		}
		if fs.NArg() > 0 {
			return usagef("revoke takes one token id, got also %q", fs.Arg(0))
		}
		s, err := loc.open(ctx, stderr, false)
		if err != nil {
			return err
		}
		defer s.Close()
		if err := s.RevokeToken(ctx, id); errors.Is(err, store.ErrNotFound) {
			return usagef("no token has the id %q (see 'ridgeflank token list')", id)
		} else if err != nil {
			return err
		}
		_, err = fmt.Fprintf(stdout, "token %s revoked\n", id)
		return err
	}
	return usagef("unknown token subcommand %q: want create, list or revoke", sub)
}

func fmtTokenTime(t *time.Time) string {
	if t == nil {
		return "-"
	}
	return t.UTC().Format("2006-01-02 15:04")
}

func writeTokensTable(w io.Writer, toks []store.Token) error {
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "ID\tNAME\tROLE\tCREATED (UTC)\tLAST USED\tSTATE")
	for _, t := range toks {
		state := "active"
		if t.RevokedAt != nil {
			state = "revoked " + fmtTokenTime(t.RevokedAt)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\n", t.ID, t.Name, t.Role, fmtTokenTime(&t.CreatedAt), fmtTokenTime(t.LastUsedAt), state)
	}
	return tw.Flush()
}

// tokenJSON is the JSON form of a token listing (never the secret).
type tokenJSON struct {
	ID         string     `json:"id"`
	Name       string     `json:"name"`
	Role       store.Role `json:"role"`
	CreatedAt  time.Time  `json:"created_at"`
	LastUsedAt *time.Time `json:"last_used_at"`
	RevokedAt  *time.Time `json:"revoked_at"`
}

func writeTokensJSON(w io.Writer, toks []store.Token) error {
	out := make([]tokenJSON, 0, len(toks))
	for _, t := range toks {
		out = append(out, tokenJSON{t.ID, t.Name, t.Role, t.CreatedAt, t.LastUsedAt, t.RevokedAt})
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}
