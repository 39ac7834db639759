package main

import (
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"os/exec"
	"strings"
	"syscall"
	"time"

	"hulltally/internal/benchproc"
)

// timePages starts `hulltally serve` on the fleet (a child, so that the
// fleet summaries written by hulltally stand), signs a maintenance person
// in, and times n requests of each page, the API's JSON of the same
// content as the baseline measured in the same run.
func timePages(bin, home, last string, n int) error {
	const person, password = "bench-maintenance", "bench-password-not-secret-0123"
	add := exec.Command(bin, "person", "add", person, "--role", "maintenance", "--password-stdin")
	add.Env = append(os.Environ(), "HULLTALLY_HOME="+home)
	add.Stdin = strings.NewReader(password + "\n")
	if out, err := add.CombinedOutput(); err != nil && !strings.Contains(string(out), "already") {
		return fmt.Errorf("person add: %v\n%s", err, out)
	}
	tc := exec.Command(bin, "token", "create", "--person", person, "--days", "1", "--json")
	tc.Env = append(os.Environ(), "HULLTALLY_HOME="+home)
	out, err := tc.Output()
	if err != nil {
		return fmt.Errorf("token create: %v", err)
	}
	var tok struct{ Token string }
	if err := json.Unmarshal(out, &tok); err != nil {
		return fmt.Errorf("token create: %v", err)
	}
	srv := exec.Command(bin, "serve", "--listen", "127.0.0.1:0")
	srv.Env = append(os.Environ(), "HULLTALLY_HOME="+home)
	stderr, err := srv.StderrPipe()
	if err != nil {
		return err
	}
	if err := srv.Start(); err != nil {
		return err
	}
	defer func() {
		_ = srv.Process.Signal(syscall.SIGTERM)
		_ = srv.Wait()
	}()
	base, err := benchproc.ServeURL(stderr)
	if err != nil {
		return err
	}
	go func() { _, _ = io.Copy(io.Discard, stderr) }()

	hc := &http.Client{CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }, Timeout: time.Minute}
	res, err := hc.PostForm(base+"/sign-in", url.Values{"name": {person}, "password": {password}})
	if err != nil {
		return err
	}
	res.Body.Close()
	var session *http.Cookie
	for _, c := range res.Cookies() {
		if c.Name == "hulltally_session" {
			session = c
		}
	}
	if session == nil {
		return fmt.Errorf("sign-in: %s, no session", res.Status)
	}
	get := func(path string, page bool) (float64, error) {
		req, err := http.NewRequest("GET", base+path, nil)
		if err != nil {
			return 0, err
		}
		if page {
			req.AddCookie(session)
		} else {
			req.Header.Set("Authorization", "Bearer "+tok.Token)
		}
		t0 := time.Now()
		res, err := hc.Do(req)
		if err != nil {
			return 0, err
		}
		_, err = io.Copy(io.Discard, res.Body)
		res.Body.Close()
		if res.StatusCode != 200 {
			return 0, fmt.Errorf("GET %s: %s", path, res.Status)
		}
		return time.Since(t0).Seconds() * 1000, err
	}
	for _, p := range []struct {
		name, path string
		page       bool
	}{
		{"fleet page", "/fleet", true},
		{"GET /api/v1/fleet", "/api/v1/fleet", false},
		{"hull page", "/hulls/" + url.PathEscape(last), true},
		{"GET /api/v1/hulls/{serial}", "/api/v1/hulls/" + url.PathEscape(last), false},
	} {
		if _, err := get(p.path, p.page); err != nil { // warm
			return err
		}
		var ms []float64
		for i := 0; i < n; i++ {
			v, err := get(p.path, p.page)
			if err != nil {
				return err
			}
			ms = append(ms, v)
		}
		fmt.Printf("  %-27s %s ms over %d requests\n", p.name, benchproc.MinMedMax(ms, "%.1f"), n)
	}
	return nil
}
