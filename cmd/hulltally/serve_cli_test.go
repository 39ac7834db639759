package main

import (
	"bufio"
	"encoding/json"
	"io"
	"net/http"
	"strings"
	"syscall"
	"testing"
	"time"
)

// TestServeCLI: `hulltally serve` starts on the address given, answers
// health and, with a token from `hulltally token create`, the API as the
// token's person; SIGTERM stops it cleanly (exit 0).
func TestServeCLI(t *testing.T) {
	e := newEnv(t)
	name := "sv-" + strings.ReplaceAll(time.Now().Format("150405.000000"), ".", "")
	e.ok("person", "add", name, "--role", "operator")
	t.Cleanup(func() { e.run("person", "disable", name) })
	var tok struct{ Token, Person string }
	e.jsonOK(&tok, "token", "create", "--person", name, "--days", "1")
	if !strings.HasPrefix(tok.Token, "htk_") || tok.Person != name {
		t.Fatalf("token create --json: %+v", tok)
	}
	if out := e.ok("token", "list"); strings.Contains(out, tok.Token) || !strings.Contains(out, name) {
		t.Fatalf("token list shows a secret or not the token:\n%s", out)
	}

	c := e.cmd("serve", "--listen", "127.0.0.1:0")
	stderr, err := c.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := c.Start(); err != nil {
		t.Fatal(err)
	}
	defer c.Process.Kill()
	lines := bufio.NewScanner(stderr)
	url := ""
	for url == "" && lines.Scan() {
		var rec struct{ Msg, URL string }
		if json.Unmarshal(lines.Bytes(), &rec) == nil && rec.Msg == "serving" {
			url = rec.URL
		}
	}
	if url == "" {
		t.Fatal("serve never said where it listens")
	}
	rest := make(chan string, 1)
	go func() { b, _ := io.ReadAll(stderr); rest <- string(b) }()
	get := func(path, token string) (int, string) {
		req, _ := http.NewRequest("GET", url+path, nil)
		if token != "" {
			req.Header.Set("Authorization", "Bearer "+token)
		}
		res, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		defer res.Body.Close()
		b, _ := io.ReadAll(res.Body)
		return res.StatusCode, string(b)
	}
	if code, _ := get("/healthz", ""); code != 200 {
		t.Fatalf("healthz %d", code)
	}
	if code, body := get("/api/v1/me", tok.Token); code != 200 || !strings.Contains(body, `"role":"operator"`) {
		t.Fatalf("me: %d %s", code, body)
	}
	if code, _ := get("/api/v1/fleet", "htk_not-a-token"); code != 401 {
		t.Fatalf("a made-up token: %d", code)
	}
	if err := c.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	if err := c.Wait(); err != nil {
		t.Fatalf("serve after SIGTERM: %v", err)
	}
	log := <-rest
	if !strings.Contains(log, `"msg":"stopped"`) || strings.Contains(log, tok.Token) {
		t.Fatalf("serve's log after SIGTERM (no token may appear in it):\n%s", log)
	}
}
