package preview

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"golang.org/x/net/websocket"
)

// This file holds the few Chrome DevTools Protocol calls the browser test
// needs, spoken over the browser's WebSocket by hand
// (https://chromedevtools.github.io/devtools-protocol/): one request at a
// time, each answered by the message with its id; events in between are
// skipped.

// chromiumPath is Debian's chromium package's launcher.
const chromiumPath = "/usr/bin/chromium"

// browser is a headless Chromium and one page in it.
type browser struct {
	cmd     *exec.Cmd
	ws      *websocket.Conn
	next    int
	session string // the page's flat session
}

// startBrowser starts headless Chromium with a fresh profile and opens a
// page of width x height CSS pixels.
func startBrowser(t testing.TB, width, height int) *browser {
	t.Helper()
	profile := t.TempDir()
	cmd := exec.Command(chromiumPath,
		"--headless", "--no-sandbox", "--disable-gpu",
		// Without these, Chromium keeps trying to reach Google's servers,
		// which a closed network refuses (see the machine notes).
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--no-first-run", "--disable-quic", "--no-default-browser-check",
		"--user-data-dir="+profile,
		"--remote-debugging-address=127.0.0.1", "--remote-debugging-port=0",
		"--remote-allow-origins=http://127.0.0.1",
		fmt.Sprintf("--window-size=%d,%d", width, height),
		"about:blank")
	var logs bytes.Buffer
	cmd.Stdout, cmd.Stderr = &logs, &logs
	// Its own process group, so that the renderer and helper processes
	// can be stopped with it.
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
	if err := cmd.Start(); err != nil {
		t.Fatalf("starting %s: %v", chromiumPath, err)
	}
	b := &browser{cmd: cmd}
	exited := make(chan struct{})
	go func() { cmd.Wait(); close(exited) }()
	t.Cleanup(func() {
		if b.ws != nil {
			b.call("Browser.close", nil, nil) // the answer may not come
			b.ws.Close()
		}
		select {
		case <-exited:
		case <-time.After(3 * time.Second):
		}
		syscall.Kill(-cmd.Process.Pid, syscall.SIGKILL) // the group we made
		<-exited
	})

	// With port 0, Chromium writes the port it took and the browser's
	// WebSocket path to DevToolsActivePort in the profile.
	var port, path string
	deadline := time.Now().Add(15 * time.Second)
	for {
		data, err := os.ReadFile(filepath.Join(profile, "DevToolsActivePort"))
		if lines := strings.Split(strings.TrimSpace(string(data)), "\n"); err == nil && len(lines) == 2 {
			port, path = lines[0], lines[1]
			break
		}
		select {
		case <-exited:
			t.Fatalf("chromium exited before it listened:\n%s", logs.String())
		default:
		}
		if time.Now().After(deadline) {
			t.Fatalf("chromium wrote no DevToolsActivePort within 15 s:\n%s", logs.String())
		}
		time.Sleep(20 * time.Millisecond)
	}
	ws, err := websocket.Dial("ws://127.0.0.1:"+port+path, "", "http://127.0.0.1")
	if err != nil {
		t.Fatalf("connecting to chromium: %v", err)
	}
	ws.MaxPayloadBytes = 64 << 20 // screenshots
	b.ws = ws

	var target struct{ TargetID string }
	if err := b.call("Target.createTarget", map[string]any{"url": "about:blank"}, &target); err != nil {
		t.Fatal(err)
	}
	var attached struct{ SessionID string }
	if err := b.call("Target.attachToTarget", map[string]any{"targetId": target.TargetID, "flatten": true}, &attached); err != nil {
		t.Fatal(err)
	}
	b.session = attached.SessionID
	if err := b.call("Emulation.setDeviceMetricsOverride", map[string]any{"width": width, "height": height, "deviceScaleFactor": 1, "mobile": false}, nil); err != nil {
		t.Fatal(err)
	}
	return b
}

// call sends one command (to the page once attached) and decodes its
// result into out.
func (b *browser) call(method string, params, out any) error {
	b.next++
	msg := map[string]any{"id": b.next, "method": method}
	if params != nil {
		msg["params"] = params
	}
	if b.session != "" {
		msg["sessionId"] = b.session
	}
	b.ws.SetDeadline(time.Now().Add(10 * time.Second))
	if err := websocket.JSON.Send(b.ws, msg); err != nil {
		return fmt.Errorf("%s: %w", method, err)
	}
	for {
		var reply struct {
			ID     int             `json:"id"`
			Result json.RawMessage `json:"result"`
			Error  *struct {
				Code    int    `json:"code"`
				Message string `json:"message"`
			} `json:"error"`
		}
		if err := websocket.JSON.Receive(b.ws, &reply); err != nil {
			return fmt.Errorf("%s: %w", method, err)
		}
		if reply.ID != b.next {
			continue // an event
		}
		if reply.Error != nil {
			return fmt.Errorf("%s: %s (%d)", method, reply.Error.Message, reply.Error.Code)
		}
		if out == nil {
			return nil
		}
		return json.Unmarshal(reply.Result, out)
	}
}

// eval evaluates a JavaScript expression in the page and returns its
// value, JSON-decoded into out.
func (b *browser) eval(expr string, out any) error {
	var r struct {
		Result struct {
			Value json.RawMessage `json:"value"`
		} `json:"result"`
		ExceptionDetails *struct {
			Text string `json:"text"`
		} `json:"exceptionDetails"`
	}
	if err := b.call("Runtime.evaluate", map[string]any{"expression": expr, "returnByValue": true}, &r); err != nil {
		return err
	}
	if r.ExceptionDetails != nil {
		return fmt.Errorf("evaluating %s: %s", expr, r.ExceptionDetails.Text)
	}
	if out == nil || r.Result.Value == nil {
		return nil
	}
	return json.Unmarshal(r.Result.Value, out)
}

// waitFor evaluates a JavaScript expression until it gives a string that
// contains want, and returns it.
func (b *browser) waitFor(ctx context.Context, expr, want string) (string, error) {
	var got string
	for {
		got = ""
		err := b.eval(expr, &got)
		if err == nil && strings.Contains(got, want) {
			return got, nil
		}
		select {
		case <-ctx.Done():
			return got, errors.Join(fmt.Errorf("%s never held %q; last %q", expr, want, got), err)
		case <-time.After(25 * time.Millisecond):
		}
	}
}

// typeText types text into the focused element, as a keyboard would after
// an IME commits it, then presses Enter.
func (b *browser) typeText(text string) error {
	if err := b.call("Input.insertText", map[string]any{"text": text}, nil); err != nil {
		return err
	}
	for _, typ := range []string{"keyDown", "keyUp"} {
		ev := map[string]any{"type": typ, "key": "Enter", "code": "Enter", "windowsVirtualKeyCode": 13, "nativeVirtualKeyCode": 13}
		if typ == "keyDown" {
			ev["text"] = "\r"
		}
		if err := b.call("Input.dispatchKeyEvent", ev, nil); err != nil {
			return err
		}
	}
	return nil
}

// screenshot returns a PNG of the page's viewport.
func (b *browser) screenshot() ([]byte, error) {
	var r struct {
		Data []byte `json:"data"` // base64 in JSON, decoded by encoding/json
	}
	err := b.call("Page.captureScreenshot", map[string]any{"format": "png"}, &r)
	return r.Data, err
}
