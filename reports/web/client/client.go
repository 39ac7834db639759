// Package client speaks to hulltally's HTTP service (package web) for the
// command line: log a dive by streaming upload, ask for clearance, read
// the fleet and verify a report. Each call returns the service's answer
// decoded into the same types the command line prints, and the JSON as
// the service sent it. A refusal is an *Error with the service's kind of
// error (input, not_permitted, unauthenticated, failure).
//
// The bearer token is sent only to the configured address: plain HTTP is
// refused except to a loopback address, and redirects are not followed.
package client

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"mime/multipart"
	"net"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/files"
	"hulltally/reports"
	"hulltally/reports/view"
)

// Client is a connection to the service. Make it with New.
type Client struct {
	base  *url.URL
	token string
	http  *http.Client
}

// ErrConfig is a server address or token that cannot be used.
var ErrConfig = errors.New("the service's address or token")

// New checks the service's address (http or https; http only to a
// loopback address, so that the token never crosses a network in clear)
// and keeps the token. hc nil: a client of its own that follows no
// redirect.
func New(rawURL, token string, hc *http.Client) (*Client, error) {
	u, err := url.Parse(strings.TrimRight(strings.TrimSpace(rawURL), "/"))
	if err != nil {
		return nil, fmt.Errorf("%w: server.url %q: %v", ErrConfig, rawURL, err)
	}
	switch {
	case u.Scheme != "http" && u.Scheme != "https":
		return nil, fmt.Errorf("%w: server.url %q: an http:// or https:// address is expected", ErrConfig, rawURL)
	case u.Host == "":
		return nil, fmt.Errorf("%w: server.url %q: no host", ErrConfig, rawURL)
	case u.User != nil:
		return nil, fmt.Errorf("%w: server.url: no user or password in the address (the token is server.token)", ErrConfig)
	case u.RawQuery != "" || u.Fragment != "":
		return nil, fmt.Errorf("%w: server.url %q: no query or fragment", ErrConfig, rawURL)
	case u.Scheme == "http" && !loopback(u.Hostname()):
		return nil, fmt.Errorf("%w: server.url %q: plain http only to a loopback address; use https (server.tls_cert and server.tls_key on the service)", ErrConfig, rawURL)
	}
	token = strings.TrimSpace(token)
	if token == "" {
		return nil, fmt.Errorf("%w: server.token (HULLTALLY_SERVER_TOKEN) is empty: make one with 'hulltally token create --person NAME' on the service's host", ErrConfig)
	}
	if hc == nil {
		hc = &http.Client{CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
	}
	return &Client{base: u, token: token, http: hc}, nil
}

// loopback reports whether host is localhost or a loopback address.
func loopback(host string) bool {
	if strings.EqualFold(host, "localhost") {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

// URL is the service's address (without secrets: the token is never in
// it).
func (c *Client) URL() string { return c.base.String() }

// Error is the service's refusal: its HTTP status and its error document.
type Error struct {
	Status  int
	Kind    string
	Message string
}

func (e *Error) Error() string { return e.Message }

// Fleet is the fleet view, most urgent first.
func (c *Client) Fleet(ctx context.Context) ([]view.FleetRow, []byte, error) {
	var out struct {
		Hulls []view.FleetRow `json:"hulls"`
	}
	raw, err := c.do(ctx, http.MethodGet, "/api/v1/fleet", "", nil, &out)
	return out.Hulls, raw, err
}

// Clear asks for the pre-dive clearance of a hull for a planned dive.
func (c *Client) Clear(ctx context.Context, serial string, depthM, bottomMin float64) (*ledger.Clearance, []byte, error) {
	q := url.Values{}
	q.Set("depth_m", strconv.FormatFloat(depthM, 'g', -1, 64))
	if bottomMin != 0 {
		q.Set("bottom_min", strconv.FormatFloat(bottomMin, 'g', -1, 64))
	}
	var out ledger.Clearance
	raw, err := c.do(ctx, http.MethodGet, "/api/v1/hulls/"+url.PathEscape(serial)+"/clearance?"+q.Encode(), "", nil, &out)
	if err != nil {
		return nil, raw, err
	}
	return &out, raw, nil
}

// VerifyReport uploads a PDF report and returns the service's verdict.
func (c *Client) VerifyReport(ctx context.Context, path string) (*reports.Verification, []byte, error) {
	f, err := files.OpenRegular(ctx, path)
	if err != nil {
		return nil, nil, &Error{Kind: "input", Message: err.Error()}
	}
	defer f.Close()
	var out reports.Verification
	raw, err := c.do(ctx, http.MethodPost, "/api/v1/reports/verify", "application/pdf", f, &out)
	if err != nil {
		return nil, raw, err
	}
	return &out, raw, nil
}

// LogDive streams a dive's files (req.Samples and req.AE) to the service
// with its site, operator, latitude and start, and returns the answer.
// Nothing is held in memory but the buffers of the copy; progress, when
// not nil, is told the bytes sent so far.
func (c *Client) LogDive(ctx context.Context, req ledger.LogRequest, progress func(sent int64)) (*view.Logged, []byte, error) {
	type part struct{ name, path string }
	parts := []part{{"samples", req.Samples}}
	if req.AE != "" {
		parts = append(parts, part{"hits", req.AE})
	}
	var opened []*os.File
	defer func() {
		for _, f := range opened {
			f.Close()
		}
	}()
	for _, p := range parts {
		f, err := files.OpenRegular(ctx, p.path)
		if err != nil {
			return nil, nil, &Error{Kind: "input", Message: err.Error()}
		}
		opened = append(opened, f)
	}
	fields := [][2]string{{"site", req.Site}, {"operator", req.Operator}}
	if req.Latitude != nil {
		fields = append(fields, [2]string{"lat", strconv.FormatFloat(*req.Latitude, 'g', -1, 64)})
	}
	if req.Start != nil {
		fields = append(fields, [2]string{"start", req.Start.Format(time.RFC3339Nano)})
	}
	pr, pw := io.Pipe()
	mw := multipart.NewWriter(pw)
	sending := make(chan error, 1)
	go func() {
		err := func() error {
			for _, f := range fields {
				if f[1] == "" {
					continue
				}
				if err := mw.WriteField(f[0], f[1]); err != nil {
					return err
				}
			}
			var sent int64
			for i, p := range parts {
				w, err := mw.CreateFormFile(p.name, filepath.Base(p.path))
				if err != nil {
					return err
				}
				before, err := opened[i].Stat()
				if err != nil {
					return err
				}
				n, err := io.Copy(w, &counting{r: files.NewReader(ctx, opened[i]), n: &sent, progress: progress})
				if err != nil {
					return err
				}
				// A file still being written (a logger that has not
				// finished) is not sent as a whole dive: the upload is cut
				// before its end, and the service stores nothing.
				after, err := os.Stat(p.path)
				if err != nil {
					return err
				}
				if n != before.Size() || after.Size() != before.Size() || !after.ModTime().Equal(before.ModTime()) || !os.SameFile(before, after) {
					return fmt.Errorf("%s changed while it was being sent; nothing was stored — send it again once the logger has finished writing: %w", p.path, errChanged)
				}
			}
			return mw.Close()
		}()
		pw.CloseWithError(err)
		sending <- err
	}()
	var out view.Logged
	raw, err := c.do(ctx, http.MethodPost, "/api/v1/hulls/"+url.PathEscape(req.Hull)+"/dives", mw.FormDataContentType(), pr, &out)
	pr.CloseWithError(errors.New("the request has ended"))
	if sendErr := <-sending; errors.Is(sendErr, errChanged) {
		return nil, raw, &Error{Kind: "input", Message: sendErr.Error()}
	}
	if err != nil {
		return nil, raw, err
	}
	return &out, raw, nil
}

// errChanged is a file that changed while it was sent.
var errChanged = errors.New("a file changed while it was sent")

// counting counts the bytes read through it.
type counting struct {
	r        io.Reader
	n        *int64
	progress func(int64)
	told     int64
}

func (c *counting) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	*c.n += int64(n)
	if c.progress != nil && (*c.n-c.told >= 64<<20 || (err == io.EOF && *c.n != c.told)) {
		c.told = *c.n
		c.progress(*c.n)
	}
	return n, err
}

// maxAnswer bounds an answer read into memory (a dive's answer carries
// its counted cycles).
const maxAnswer = 256 << 20

// do sends a request and decodes a 2xx JSON answer into out; it returns
// the answer's bytes as sent.
func (c *Client) do(ctx context.Context, method, path, contentType string, body io.Reader, out any) ([]byte, error) {
	req, err := http.NewRequestWithContext(ctx, method, c.base.String()+path, body)
	if err != nil {
		return nil, fmt.Errorf("%w: %v", ErrConfig, err)
	}
	req.Header.Set("Authorization", "Bearer "+c.token)
	req.Header.Set("Accept", "application/json")
	if contentType != "" {
		req.Header.Set("Content-Type", contentType)
	}
	res, err := c.http.Do(req)
	if err != nil {
		// url.Error carries the address, never the token (a header).
		return nil, fmt.Errorf("the service at %s could not be reached: %w", c.URL(), err)
	}
	defer res.Body.Close()
	raw, err := io.ReadAll(io.LimitReader(res.Body, maxAnswer+1))
	if err != nil {
		return nil, fmt.Errorf("reading the answer of the service at %s: %w", c.URL(), err)
	}
	if len(raw) > maxAnswer {
		return nil, fmt.Errorf("the answer of the service at %s is larger than %d bytes", c.URL(), maxAnswer)
	}
	if res.StatusCode < 200 || res.StatusCode > 299 {
		return raw, refusal(res, raw)
	}
	if ct := res.Header.Get("Content-Type"); !strings.HasPrefix(ct, "application/json") {
		return raw, fmt.Errorf("the service at %s answered %s, not JSON (is server.url the hulltally service?)", c.URL(), ct)
	}
	if err := json.Unmarshal(raw, out); err != nil {
		return raw, fmt.Errorf("the answer of the service at %s: %w", c.URL(), err)
	}
	return bytes.TrimSpace(raw), nil
}

// refusal is the error of a non-2xx answer: the service's error document
// when it sent one, else the status.
func refusal(res *http.Response, raw []byte) error {
	var doc struct {
		Error struct{ Kind, Message string } `json:"error"`
	}
	if json.Unmarshal(raw, &doc) == nil && doc.Error.Kind != "" {
		return &Error{Status: res.StatusCode, Kind: doc.Error.Kind, Message: doc.Error.Message}
	}
	return &Error{Status: res.StatusCode, Kind: "failure", Message: fmt.Sprintf("the service answered %s (is server.url the hulltally service, and as new as this command?)", res.Status)}
}
