package main

import (
	"bytes"
	"context"
	"errors"
	"strings"
	"testing"
)

// runCLI runs the CLI in-process with only the given environment variables.
func runCLI(t *testing.T, env map[string]string, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var out, errb bytes.Buffer
	ctx := withEnv(context.Background(), func(k string) (string, bool) {
		v, ok := env[k]
		return v, ok
	})
	code = run(ctx, args, &out, &errb)
	return code, out.String(), errb.String()
}

func TestHelpListsCommands(t *testing.T) {
	for _, args := range [][]string{{"help"}, {"--help"}, {"-h"}} {
		code, out, _ := runCLI(t, nil, args...)
		if code != 0 {
			t.Errorf("%v: exit %d", args, code)
		}
		for _, name := range []string{"predict", "geotherm"} {
			if !strings.Contains(out, name) {
				t.Errorf("%v: the list lacks %s:\n%s", args, name, out)
			}
		}
	}
	code, _, errOut := runCLI(t, nil)
	if code != 2 || !strings.Contains(errOut, "Commands:") {
		t.Errorf("no arguments: exit %d, stderr %q; want 2 and the list", code, errOut)
	}
}

// Every registered command answers --help on stdout with exit status 0, and
// "ridgeflank help NAME" prints the same.
func TestEveryCommandAnswersHelp(t *testing.T) {
	for name := range commands {
		t.Run(name, func(t *testing.T) {
			code, out, errOut := runCLI(t, nil, name, "--help")
			if code != 0 || !strings.Contains(out, "Usage:") || errOut != "" {
				t.Errorf("exit %d, stdout %q, stderr %q", code, out, errOut)
			}
			code2, out2, _ := runCLI(t, nil, "help", name)
			if code2 != 0 || out2 != out {
				t.Errorf("help %s differs from %s --help", name, name)
			}
		})
	}
}

func TestUnknownCommand(t *testing.T) {
	code, _, errOut := runCLI(t, nil, "predcit")
	if code != 2 || !strings.Contains(errOut, `"predcit"`) {
		t.Errorf("exit %d, stderr %q", code, errOut)
	}
	if code, _, _ := runCLI(t, nil, "help", "nope"); code != 2 {
		t.Errorf("help nope: exit %d, want 2", code)
	}
}

// Errors are one plain sentence on one line, ending with a full stop.
func TestErrorIsOneSentence(t *testing.T) {
	_, out, errOut := runCLI(t, nil, "predict", "--age", "ten")
	if out != "" || strings.Count(errOut, "\n") != 1 || !strings.HasSuffix(errOut, ".\n") || !strings.HasPrefix(errOut, "ridgeflank predict: ") {
		t.Errorf("stdout %q, stderr %q", out, errOut)
	}
}

func TestUnknownFlagAndPositional(t *testing.T) {
	for _, args := range [][]string{
		{"predict", "--age", "1", "--depth", "2"},
		{"predict", "--age", "1", "extra"},
		{"geotherm", "--age"},
	} {
		if code, _, errOut := runCLI(t, nil, args...); code != 2 || errOut == "" {
			t.Errorf("%v: exit %d, stderr %q; want 2", args, code, errOut)
		}
	}
}

// RIDGEFLANK_<FLAG> variables set flags; the command line wins; a value the
// flag rejects is a usage error naming the variable.
func TestEnvironmentFlags(t *testing.T) {
	code, out, _ := runCLI(t, map[string]string{"RIDGEFLANK_MODEL": "psm", "RIDGEFLANK_FORMAT": "csv"}, "predict", "--age", "10")
	if code != 0 || !strings.HasPrefix(out, "age_ma,") {
		t.Fatalf("exit %d, output %q", code, out)
	}
	_, viaEnv, _ := runCLI(t, map[string]string{"RIDGEFLANK_MODEL": "psm"}, "predict", "--age", "10", "--format", "json")
	_, viaFlag, _ := runCLI(t, map[string]string{"RIDGEFLANK_MODEL": "gdh1"}, "predict", "--age", "10", "--format", "json", "--model", "psm")
	if !strings.Contains(viaEnv, `"id": "psm"`) || viaEnv != viaFlag {
		t.Errorf("environment and flag disagree:\n%s\n%s", viaEnv, viaFlag)
	}
	code, _, errOut := runCLI(t, map[string]string{"RIDGEFLANK_STEP_KM": "five"}, "geotherm", "--age", "10")
	if code != 2 || !strings.Contains(errOut, "RIDGEFLANK_STEP_KM") {
		t.Errorf("bad environment value: exit %d, stderr %q", code, errOut)
	}
	code, _, _ = runCLI(t, map[string]string{"RIDGEFLANK_AGE": "25"}, "geotherm")
	if code != 0 {
		t.Errorf("age from the environment: exit %d", code)
	}
}

type failingWriter struct{}

func (failingWriter) Write([]byte) (int, error) { return 0, errors.New("disk full") }

// Failures that are not the user's fault exit with 1.
func TestWriteFailureExitsOne(t *testing.T) {
	for _, args := range [][]string{
		{"predict", "--age", "10"}, {"predict", "--age", "10", "--format", "json"},
		{"geotherm", "--age", "10", "--format", "csv"},
	} {
		var errb bytes.Buffer
		code := run(withEnv(context.Background(), func(string) (string, bool) { return "", false }), args, failingWriter{}, &errb)
		if code != 1 || !strings.Contains(errb.String(), "disk full") {
			t.Errorf("%v: exit %d, stderr %q; want 1", args, code, errb.String())
		}
	}
}

func TestSentence(t *testing.T) {
	for in, want := range map[string]string{
		"bad thing":           "bad thing.",
		"bad\n  thing.":       "bad thing.",
		"":                    "failed.",
		"choose one of a, b.": "choose one of a, b.",
	} {
		if got := sentence(in); got != want {
			t.Errorf("sentence(%q) = %q, want %q", in, got, want)
		}
	}
}

// withEnv returns a context whose parseFlags reads environment variables
// through lookup instead of os.LookupEnv.
func withEnv(ctx context.Context, lookup func(string) (string, bool)) context.Context {
	return context.WithValue(ctx, envKey{}, lookup)
}
