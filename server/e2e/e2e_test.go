// Package e2e drives glowlog in Debian's headless Chromium (chromedp):
// sign in, log a run with a spectrum, read the results, open the trends,
// and sign off as a reviewer. Under CI=true a missing browser fails the
// run instead of skipping it. Screenshots go to $E2E_ARTIFACTS (or a
// temporary directory) for people to look at.
package e2e

import (
	"context"
	"fmt"
	"net/http/httptest"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"glowlog/server"
	"glowlog/store"
)

var browserCtx context.Context

func TestMain(m *testing.M) {
	path, err := exec.LookPath("chromium")
	if err != nil {
		if os.Getenv("CI") != "" {
			fmt.Fprintln(os.Stderr, "e2e: chromium not found and CI is set: failing instead of skipping")
			os.Exit(1)
		}
		os.Exit(m.Run()) // the tests skip themselves
	}
	profile, err := os.MkdirTemp("", "glowlog-e2e-chromium-")
	if err != nil {
		panic(err)
	}
	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(path), chromedp.NoSandbox, chromedp.DisableGPU,
		chromedp.Flag("disable-quic", true), chromedp.Flag("disable-component-update", true),
		chromedp.UserDataDir(profile), chromedp.WindowSize(1280, 1000))
	actx, cancelA := chromedp.NewExecAllocator(context.Background(), opts...)
	bctx, cancelB := chromedp.NewContext(actx)
	if err := chromedp.Do(bctx); err != nil { // start now, with no deadline
		fmt.Fprintln(os.Stderr, "e2e: starting chromium:", err)
		os.Exit(1)
	}
	browserCtx = bctx
	code := m.Run()
	cancelB()
	cancelA()
	os.RemoveAll(profile)
	os.Exit(code)
}

// app is a running glowlog with known accounts.
type app struct {
	url string
	db  *store.DB
	s   *server.Server
}

const password = "correct horse battery"

func startApp(t *testing.T) *app {
	t.Helper()
	ctx := context.Background()
	db, err := store.Open(ctx, filepath.Join(t.TempDir(), "e2e.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	hash, err := server.HashPassword(password)
	if err != nil {
		t.Fatal(err)
	}
	for _, u := range []struct {
		name string
		role store.Role
	}{{"olwen", store.RoleOperator}, {"rhys", store.RoleReviewer}, {"admin", store.RoleAdmin}} {
		if _, err := db.CreateUser(ctx, u.name, u.role, hash); err != nil {
			t.Fatal(err)
		}
	}
	s := server.New(db, server.Options{})
	srv := httptest.NewServer(s)
	t.Cleanup(srv.Close)
	return &app{url: srv.URL, db: db, s: s}
}

// tab opens an isolated browser context (own cookies) with a timeout.
func tab(t *testing.T) context.Context {
	t.Helper()
	if browserCtx == nil {
		t.Skip("chromium not installed")
	}
	ctx, cancel := chromedp.NewContext(browserCtx, chromedp.WithNewBrowserContext())
	t.Cleanup(cancel)
	tctx, cancel2 := context.WithTimeout(ctx, 60*time.Second)
	t.Cleanup(cancel2)
	return tctx
}

func run[T any](t *testing.T, ctx context.Context, a chromedp.Action[T]) T {
	t.Helper()
	v, err := chromedp.Run(ctx, a)
	if err != nil {
		t.Fatalf("browser: %v", err)
	}
	return v
}

func do(t *testing.T, ctx context.Context, actions ...chromedp.Action[struct{}]) {
	t.Helper()
	if err := chromedp.Do(ctx, actions...); err != nil {
		t.Fatalf("browser: %v", err)
	}
}

// shot saves a full-page PNG screenshot for people to look at.
func shot(t *testing.T, ctx context.Context, name string) {
	t.Helper()
	dir := os.Getenv("E2E_ARTIFACTS")
	if dir == "" {
		dir = t.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	png := run(t, ctx, chromedp.FullScreenshot(100))
	if err := os.WriteFile(filepath.Join(dir, name+".png"), png, 0o644); err != nil {
		t.Fatal(err)
	}
}

func signIn(t *testing.T, ctx context.Context, a *app, name string) {
	t.Helper()
	do(t, ctx,
		chromedp.Navigate(a.url+"/login"),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=login-name]`)),
		chromedp.SendKeys(chromedp.CSS(`[data-testid=login-name]`), name),
		chromedp.SendKeys(chromedp.CSS(`[data-testid=login-password]`), password),
		chromedp.Click(chromedp.CSS(`[data-testid=login-submit]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=who]`)),
	)
}

// TestSignIn: the sign-in page works in a real browser and a wrong
// password is refused with a message.
func TestSignIn(t *testing.T) {
	a := startApp(t)
	ctx := tab(t)
	do(t, ctx,
		chromedp.Navigate(a.url+"/login"),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=login-name]`)),
		chromedp.SendKeys(chromedp.CSS(`[data-testid=login-name]`), "olwen"),
		chromedp.SendKeys(chromedp.CSS(`[data-testid=login-password]`), "wrong password!"),
		chromedp.Click(chromedp.CSS(`[data-testid=login-submit]`)),
		chromedp.WaitVisible(chromedp.CSS(`[data-testid=error]`)),
	)
	signIn(t, ctx, a, "olwen")
	who := run(t, ctx, chromedp.Text(chromedp.CSS(`[data-testid=who]`)))
	if want := "olwen (operator)"; !contains(who, want) {
		t.Errorf("header shows %q, want %q", who, want)
	}
}

func contains(s, sub string) bool { return strings.Contains(s, sub) }
