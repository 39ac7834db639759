package main

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"net"
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
	// A stalled upload is cut off after a second.
	c.Env = append(c.Env, "HULLTALLY_SERVER_READ_TIMEOUT_S=1")
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

	// A stalled upload: headers and half the body, then nothing. The
	// service cuts it off at the read timeout and stores nothing.
	dives := e.count("dives")
	conn, err := net.Dial("tcp", strings.TrimPrefix(url, "http://"))
	if err != nil {
		t.Fatal(err)
	}
	body := "--b\r\nContent-Disposition: form-data; name=\"samples\"; filename=\"d.csv\"\r\n\r\ntime,depth_m\n2026-05-01T08:00:00Z,0\n"
	fmt.Fprintf(conn, "POST /api/v1/hulls/EX-C4000-01/dives HTTP/1.1\r\nHost: x\r\nAuthorization: Bearer %s\r\nContent-Type: multipart/form-data; boundary=b\r\nContent-Length: %d\r\n\r\n%s", tok.Token, 10*len(body), body)
	start := time.Now()
	conn.SetReadDeadline(time.Now().Add(10 * time.Second))
	io.ReadAll(conn) // returns when the service gives up on the upload
	conn.Close()
	if waited := time.Since(start); waited > 8*time.Second {
		t.Fatalf("a stalled upload held the connection for %v", waited)
	}
	if e.count("dives") != dives {
		t.Fatal("a stalled upload stored a dive")
	}
	if err := c.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	// Every line of the log is read (the pipe is at its end when serve
	// exits) before Wait, which closes the pipe and could cut the read.
	log := <-rest
	if err := c.Wait(); err != nil {
		t.Fatalf("serve after SIGTERM: %v", err)
	}
	if !strings.Contains(log, `"msg":"stopped"`) || strings.Contains(log, tok.Token) {
		t.Fatalf("serve's log after SIGTERM (no token may appear in it):\n%s", log)
	}
}
