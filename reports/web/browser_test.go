package web

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"hulltally/ledger"
	"hulltally/reports"
)

// chromiumPath is Debian's chromium (installed by .ci/run), or "".
func chromiumPath() string {
	for _, p := range []string{"/usr/bin/chromium", "/usr/bin/chromium-browser"} {
		if _, err := os.Stat(p); err == nil {
			return p
		}
	}
	p, _ := exec.LookPath("chromium")
	return p
}

// screens are the widths every page is shot at: a bridge or office
// screen, and a tablet.
var screens = []struct {
	name string
	w, h int64
}{{"1280x800", 1280, 800}, {"tablet-768x1024", 768, 1024}}

// TestPagesInBrowser drives Debian's chromium, headless, against the
// service on loopback and a real PostgreSQL: each role signs in and does
// its work on the pages, and every page is shot at both widths (into
// $SCREENSHOT_DIR when set, to be looked at). The adversarial cases: an
// inspector sees no form that writes, and a post forged from the
// inspector's own signed-in page is refused and stores nothing.
func TestPagesInBrowser(t *testing.T) {
	exe := chromiumPath()
	if exe == "" && os.Getenv("BROWSER_TESTS") == "required" {
		t.Fatal("Debian's chromium is not installed, and BROWSER_TESTS=required (.ci/run)")
	}
	if exe == "" {
		t.Skip("SKIP: Debian's chromium is not installed (apt-get install chromium; .ci/run installs it)")
	}
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	shots := os.Getenv("SCREENSHOT_DIR")
	if shots == "" {
		shots = t.TempDir()
	}
	if err := os.MkdirAll(shots, 0o755); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	samples := filepath.Join(dir, "dive-0501.csv")
	if err := os.WriteFile(samples, []byte(diveCSV), 0o644); err != nil {
		t.Fatal(err)
	}
	pdf := filepath.Join(dir, "hull.pdf")
	if _, err := reports.WriteWith(context.Background(), f.owner, reports.KindHull, serial, pdf, time.Now(), reports.WriteOptions{}); err != nil {
		t.Fatal(err)
	}

	opts := append(chromedp.DefaultExecAllocatorOptions[:], chromedp.ExecPath(exe), chromedp.NoSandbox,
		chromedp.Flag("disable-gpu", true), chromedp.WindowSize(1280, 800))
	actx, cancelA := chromedp.NewExecAllocator(context.Background(), opts...)
	defer cancelA()
	bctx, cancelB := chromedp.NewContext(actx)
	defer cancelB()
	ctx, cancel := context.WithTimeout(bctx, 90*time.Second)
	defer cancel()
	run := func(what string, steps ...chromedp.Action[chromedp.Void]) {
		t.Helper()
		if err := chromedp.Do(ctx, steps...); err != nil {
			html, _ := chromedp.Run(bctx, chromedp.Evaluate[string](`document.documentElement.outerHTML`))
			t.Fatalf("%s: %v\nthe page:\n%.3000s", what, err, html)
		}
	}
	base := f.http.URL
	shoot := func(name string) {
		t.Helper()
		for _, s := range screens {
			run("screen "+s.name, chromedp.EmulateViewport(s.w, s.h), chromedp.Sleep(150*time.Millisecond))
			png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
			if err != nil {
				t.Fatalf("screenshot %s: %v", name, err)
			}
			if err := os.WriteFile(filepath.Join(shots, fmt.Sprintf("%s-%s.png", name, s.name)), png, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		run("back to the wide screen", chromedp.EmulateViewport(1280, 800))
	}
	signIn := func(role ledger.Role) {
		t.Helper()
		run("sign in as "+string(role),
			chromedp.Navigate(base+"/fleet"),
			chromedp.WaitVisible(chromedp.ID("name")),
			chromedp.SendKeys(chromedp.ID("name"), f.names[role]),
			chromedp.SendKeys(chromedp.ID("password"), f.passwords[role]),
			chromedp.Click(chromedp.CSS(`button[type="submit"]`)),
			chromedp.WaitVisible(chromedp.Search(`//h1[normalize-space()="Fleet"]`)))
	}
	signOut := func() {
		t.Helper()
		run("sign out", chromedp.Click(chromedp.CSS(`form.who button`)), chromedp.WaitVisible(chromedp.ID("name")))
	}
	text := func(sel string) string {
		t.Helper()
		s, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(sel)))
		if err != nil {
			t.Fatalf("read %s: %v", sel, err)
		}
		return s
	}
	writeForms := func() int {
		t.Helper()
		n, err := chromedp.Run(ctx, chromedp.Evaluate[int](`document.querySelectorAll('main form[method="post"]').length`))
		if err != nil {
			t.Fatalf("count the forms: %v", err)
		}
		return n
	}

	run("the sign-in page", chromedp.Navigate(base+"/sign-in"), chromedp.WaitVisible(chromedp.ID("name")))
	shoot("sign-in")

	// The operator logs a dive after surfacing and asks for clearance.
	signIn(ledger.RoleOperator)
	shoot("fleet")
	run("open the hull", chromedp.Click(chromedp.CSS(`a[href="/hulls/`+serial+`"]`)), chromedp.WaitVisible(chromedp.ID(`why`)))
	run("open the upload", chromedp.Click(chromedp.CSS(`a[href="/hulls/`+serial+`/log"]`)), chromedp.WaitVisible(chromedp.ID(`samples`)))
	shoot("log-dive")
	run("upload the dive",
		chromedp.SendKeys(chromedp.ID("lat"), "45"),
		chromedp.SetUploadFiles(chromedp.ID("samples"), []string{samples}),
		chromedp.Click(chromedp.CSS(`form.upload button[type="submit"]`)),
		chromedp.WaitVisible(chromedp.ID(`verdict`)))
	if h := text("h1"); !strings.Contains(h, "logged on") {
		t.Fatalf("after the upload: %q", h)
	}
	if v := text("#verdict"); !strings.Contains(v, "Hull status") {
		t.Fatalf("the verdict: %q", v)
	}
	shoot("dive-logged")
	if f.dives() != 1 {
		t.Fatalf("%d dives after the upload", f.dives())
	}
	run("open the dive", chromedp.Click(chromedp.Search(`//a[normalize-space()="The dive in full"]`)), chromedp.WaitVisible(chromedp.ID(`evidence`)))
	shoot("dive")
	run("ask for clearance",
		chromedp.Navigate(base+"/hulls/"+serial+"/clearance"),
		chromedp.WaitVisible(chromedp.ID("depth")),
		chromedp.SendKeys(chromedp.ID("depth"), "3000"),
		chromedp.SendKeys(chromedp.ID("bottom"), "60"),
		chromedp.Submit(chromedp.ID("depth")),
		chromedp.WaitVisible(chromedp.ID("answer")))
	// The hull has no inspection nor proof test on record: on hold, so
	// the answer must be no-go, with the reasons.
	if a := text("section.answer"); !strings.Contains(a, "NO-GO for 3000 m") || !strings.Contains(a, "no passing inspection on record") {
		t.Fatalf("the clearance: %q", a)
	}
	shoot("clearance")
	signOut()

	// Maintenance watches the fleet, opens the hull and records an
	// inspection.
	signIn(ledger.RoleMaintenance)
	run("open the hull", chromedp.Navigate(base+"/hulls/"+serial), chromedp.WaitVisible(chromedp.ID(`records`)))
	if n := writeForms(); n != 4 { // inspection, proof test, decision, issue the report
		t.Fatalf("maintenance sees %d forms on the hull page, want 4", n)
	}
	shoot("hull")
	run("record an inspection",
		chromedp.SendKeys(chromedp.ID("in-method"), "ultrasonic"),
		chromedp.SendKeys(chromedp.ID("in-findings"), "no indication"),
		chromedp.Click(chromedp.CSS(`form[action$="/inspections"] button`)),
		chromedp.WaitVisible(chromedp.Search(`//td[contains(., "inspection (ultrasonic)")]`)))
	if r := text("#records"); !strings.Contains(r, "inspection (ultrasonic)") || !strings.Contains(r, f.names[ledger.RoleMaintenance]) {
		t.Fatalf("the records after the inspection: %q", r)
	}
	signOut()

	// The inspector reads and verifies, and can change nothing.
	signIn(ledger.RoleInspector)
	run("open the hull", chromedp.Navigate(base+"/hulls/"+serial), chromedp.WaitVisible(chromedp.ID(`records`)))
	if n := writeForms(); n != 0 {
		t.Fatalf("the inspector sees %d forms that write", n)
	}
	before := f.dives()
	var inspections int64
	if err := f.owner.Pool().QueryRow(context.Background(), "SELECT count(*) FROM inspections").Scan(&inspections); err != nil {
		t.Fatal(err)
	}
	status, err := chromedp.Run(ctx, chromedp.Evaluate[int](`fetch("/hulls/`+serial+`/inspections", {method: "POST",
		headers: {"Content-Type": "application/x-www-form-urlencoded"}, body: "method=forged&result=pass"}).then(r => r.status)`, chromedp.EvalAwaitPromise))
	if err != nil {
		t.Fatalf("a forged post from the inspector's page: %v", err)
	}
	var after int64
	if err := f.owner.Pool().QueryRow(context.Background(), "SELECT count(*) FROM inspections").Scan(&after); err != nil {
		t.Fatal(err)
	}
	if status != 403 || after != inspections || f.dives() != before {
		t.Fatalf("the inspector's forged post: %d, inspections %d → %d", status, inspections, after)
	}
	run("verify a report",
		chromedp.Navigate(base+"/verify-report"),
		chromedp.WaitVisible(chromedp.ID("report")))
	shoot("verify-report")
	run("drop the report",
		chromedp.SetUploadFiles(chromedp.ID("report"), []string{pdf}),
		chromedp.Click(chromedp.CSS(`form.upload button[type="submit"]`)),
		chromedp.WaitVisible(chromedp.ID("verdict")))
	// The report was issued before the dive and the inspection: it must
	// not pass for the ledger as it is now.
	if v := text("section.answer"); !strings.Contains(v, "REPORT OUTDATED") && !strings.Contains(v, "DOES NOT MATCH") {
		t.Fatalf("the verdict on a report issued before the last dive: %q", v)
	}
	shoot("report-verified")
	t.Logf("screenshots in %s", shots)
}
