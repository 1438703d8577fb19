package review

import (
	"bytes"
	"context"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/hex"
	"errors"
	"fmt"
	"net"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
)

// MaxBody is the largest request body the server reads (http.MaxBytesReader); a larger
// one is answered 413.
const MaxBody = 64 << 10

// Field limits of the decision form.
const (
	maxRuleID   = 200
	maxReviewer = 100
	maxNote     = 2000
	maxFlashes  = 64
)

// A Server is the local review page: it serves the report of one study with forms to
// accept, reject or retire each rule, and writes each decision to the one rule-set file
// it was given, at once and atomically (rules.Decide, then RuleSet.Save).
//
// Defences: the server answers only requests whose Host is a loopback name
// (127.0.0.1, localhost or [::1], with the server's port once known), so a web page
// that points its own domain at 127.0.0.1 cannot read or drive it; every POST carries
// a token drawn at random when the server starts, compared in constant time; request
// bodies are limited to MaxBody; no value from a request is used as a file path; pages
// are sent with a Content-Security-Policy that allows only the page's own inline style
// and script, and are not cached.
type Server struct {
	path  string
	data  *render.ReportData
	token string
	now   func() time.Time

	// mu serialises load-decide-save, so two decisions never interleave.
	mu sync.Mutex

	fmu     sync.Mutex
	flashes map[string]flash
	forder  []string

	port string // the port Host headers must name; "" accepts any
}

type flash struct{ kind, msg string }

// NewServer returns a server for the rule set at path and the report data d, which it
// shows with each rule's current status, re-read from path at every request. now gives
// the time of decisions; nil means time.Now.
func NewServer(path string, d *render.ReportData, now func() time.Time) (*Server, error) {
	if path == "" || d == nil {
		return nil, errors.New("review: NewServer needs a rule-set path and report data")
	}
	var b [32]byte
	if _, err := rand.Read(b[:]); err != nil {
		return nil, err
	}
	if now == nil {
		now = time.Now
	}
	return &Server{path: path, data: d, token: hex.EncodeToString(b[:]), now: now, flashes: map[string]flash{}}, nil
}

// Token returns the anti-forgery token forms must carry.
func (s *Server) Token() string { return s.token }

// SetPort restricts the Host headers the server accepts to the given port.
func (s *Server) SetPort(port string) { s.port = port }

// Listen opens a TCP listener on a loopback address: host must be 127.0.0.1, ::1 or
// localhost; port 0 picks a free port.
func Listen(host string, port int) (net.Listener, error) {
	switch host {
	case "", "localhost":
		host = "127.0.0.1"
	case "127.0.0.1", "::1", "[::1]":
		host = strings.Trim(host, "[]")
	default:
		return nil, fmt.Errorf("address %q is not a loopback address (want 127.0.0.1, ::1 or localhost): the review page writes the rule set and is for this machine only", host)
	}
	if port < 0 || port > 65535 {
		return nil, fmt.Errorf("port %d out of range 0–65535", port)
	}
	return net.Listen("tcp", net.JoinHostPort(host, strconv.Itoa(port)))
}

// URL returns the page's address on listener ln.
func URL(ln net.Listener) string {
	a := ln.Addr().(*net.TCPAddr)
	return "http://" + net.JoinHostPort(a.IP.String(), strconv.Itoa(a.Port)) + "/"
}

// Serve answers requests on ln until ctx is done, then shuts down gracefully.
func (s *Server) Serve(ctx context.Context, ln net.Listener) error {
	if a, ok := ln.Addr().(*net.TCPAddr); ok {
		s.SetPort(strconv.Itoa(a.Port))
	}
	hs := &http.Server{Handler: s.Handler(), ReadHeaderTimeout: 10 * time.Second, ReadTimeout: 30 * time.Second,
		WriteTimeout: 60 * time.Second, IdleTimeout: 60 * time.Second, MaxHeaderBytes: 32 << 10}
	errc := make(chan error, 1)
	go func() { errc <- hs.Serve(ln) }()
	select {
	case err := <-errc:
		return err
	case <-ctx.Done():
		sctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		if err := hs.Shutdown(sctx); err != nil {
			return err
		}
		<-errc
		return nil
	}
}

// Handler returns the server's HTTP handler: GET / (the page) and POST /decide.
func (s *Server) Handler() http.Handler {
	mux := http.NewServeMux()
	mux.HandleFunc("/", s.page)
	mux.HandleFunc("/decide", s.decide)
	return s.guard(mux)
}

// guard applies the checks every request passes: loopback Host, same-origin POST, and
// the security headers.
func (s *Server) guard(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("Content-Security-Policy", render.ReportCSP()+"; frame-ancestors 'none'")
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("X-Frame-Options", "DENY")
		h.Set("Referrer-Policy", "no-referrer")
		h.Set("Cache-Control", "no-store")
		h.Set("Cross-Origin-Opener-Policy", "same-origin")
		h.Set("Cross-Origin-Resource-Policy", "same-origin")
		if !s.loopbackHost(r.Host) {
			http.Error(w, "forbidden: this page answers only to 127.0.0.1, localhost or [::1]", http.StatusForbidden)
			return
		}
		if r.Method == http.MethodPost {
			if o := r.Header.Get("Origin"); o != "" && o != "null" {
				u, err := url.Parse(o)
				if err != nil || !s.loopbackHost(u.Host) {
					http.Error(w, "forbidden: cross-origin request", http.StatusForbidden)
					return
				}
			}
			if r.Header.Get("Sec-Fetch-Site") == "cross-site" {
				http.Error(w, "forbidden: cross-site request", http.StatusForbidden)
				return
			}
		}
		next.ServeHTTP(w, r)
	})
}

// loopbackHost reports whether host (a Host header, host[:port]) names a loopback
// address and, once the server knows its port, that port.
func (s *Server) loopbackHost(host string) bool {
	name, port, err := net.SplitHostPort(host)
	if err != nil {
		return false // a Host without a port is not what a browser sends to us
	}
	switch name {
	case "127.0.0.1", "localhost", "::1":
	default:
		return false
	}
	return s.port == "" || port == s.port
}

func (s *Server) page(w http.ResponseWriter, r *http.Request) {
	if r.URL.Path != "/" {
		http.NotFound(w, r)
		return
	}
	if r.Method != http.MethodGet && r.Method != http.MethodHead {
		w.Header().Set("Allow", "GET, HEAD")
		http.Error(w, "method not allowed", http.StatusMethodNotAllowed)
		return
	}
	var f flash
	if id := r.URL.Query().Get("flash"); id != "" {
		f = s.takeFlash(id)
	}
	s.render(w, r, http.StatusOK, f)
}

// render writes the page with the rule set as it is on disk now.
func (s *Server) render(w http.ResponseWriter, r *http.Request, code int, f flash) {
	rs, err := rules.Load(s.path)
	if err != nil {
		http.Error(w, "reading the rule set: "+err.Error(), http.StatusInternalServerError)
		return
	}
	d := s.current(rs)
	rc := &render.ReviewControls{Action: "/decide", Token: s.token, Flash: f.msg, FlashKind: f.kind, State: map[string]string{}}
	if c, err := r.Cookie(reviewerCookie); err == nil {
		if v, err := url.QueryUnescape(c.Value); err == nil && len(v) <= maxReviewer {
			rc.Reviewer = v
		}
	}
	for _, rule := range rs.Rules {
		rc.State[rule.ID] = RuleState(rule)
	}
	var buf bytes.Buffer
	if err := render.ReportHTML(&buf, d, render.ReportOptions{Review: rc}); err != nil {
		http.Error(w, err.Error(), http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(code)
	if r.Method != http.MethodHead {
		w.Write(buf.Bytes())
	}
}

// current returns a copy of the report data whose cards show the rules of rs: each card
// keeps its figures and points at the rule as now on disk; rules new in the file get a
// card without figures, and rules gone from the file lose theirs.
func (s *Server) current(rs *rules.RuleSet) *render.ReportData {
	d := *s.data
	byID := map[string]render.Proposal{}
	for _, p := range s.data.Proposals {
		byID[p.Rule.ID] = p
	}
	d.Proposals = make([]render.Proposal, 0, len(rs.Rules))
	for _, r := range rs.Rules {
		p, ok := byID[r.ID]
		if !ok {
			p = render.Proposal{Unevaluable: "added to the rule set after this page was computed; restart the review to evaluate it"}
		}
		p.Rule = r
		d.Proposals = append(d.Proposals, p)
	}
	d.RuleSet = ruleSetInfo(rs)
	return &d
}

const reviewerCookie = "crossform_reviewer"

// Decision outcomes, as HTTP status codes of the POST.
func (s *Server) decide(w http.ResponseWriter, r *http.Request) {
	if r.Method != http.MethodPost {
		w.Header().Set("Allow", "POST")
		http.Error(w, "method not allowed", http.StatusMethodNotAllowed)
		return
	}
	r.Body = http.MaxBytesReader(w, r.Body, MaxBody)
	if err := r.ParseForm(); err != nil {
		var mbe *http.MaxBytesError
		if errors.As(err, &mbe) {
			http.Error(w, fmt.Sprintf("request body too large (limit %d bytes)", MaxBody), http.StatusRequestEntityTooLarge)
			return
		}
		http.Error(w, "bad form: "+err.Error(), http.StatusBadRequest)
		return
	}
	tok := r.PostForm.Get("token")
	if subtle.ConstantTimeCompare([]byte(tok), []byte(s.token)) != 1 {
		http.Error(w, "forbidden: missing or wrong form token; reload the page", http.StatusForbidden)
		return
	}
	id := r.PostForm.Get("rule")
	action := r.PostForm.Get("action")
	by := strings.TrimSpace(r.PostForm.Get("by"))
	note := strings.TrimSpace(r.PostForm.Get("note"))
	state := r.PostForm.Get("state")
	switch {
	case id == "" || len(id) > maxRuleID:
		s.fail(w, r, http.StatusBadRequest, "error", "The form names no rule.")
		return
	case action != rules.ActionAccept && action != rules.ActionReject && action != rules.ActionRetire:
		s.fail(w, r, http.StatusBadRequest, "error", fmt.Sprintf("Unknown action %q: want accept, reject or retire.", action))
		return
	case by == "":
		s.fail(w, r, http.StatusBadRequest, "error", "Say who decides: the reviewer name is required.")
		return
	case len(by) > maxReviewer || len(note) > maxNote:
		s.fail(w, r, http.StatusBadRequest, "error", fmt.Sprintf("Reviewer name (at most %d bytes) or note (at most %d bytes) too long.", maxReviewer, maxNote))
		return
	}
	code, kind, msg := s.apply(id, action, by, note, state)
	if code != http.StatusOK {
		s.fail(w, r, code, kind, msg)
		return
	}
	http.SetCookie(w, &http.Cookie{Name: reviewerCookie, Value: url.QueryEscape(by), Path: "/", HttpOnly: true,
		SameSite: http.SameSiteStrictMode, MaxAge: 30 * 24 * 3600})
	fid := s.putFlash(flash{kind, msg})
	http.Redirect(w, r, "/?flash="+fid+"#"+render.Anchor(id), http.StatusSeeOther)
}

// apply loads the rule set, checks that the rule is in the state the form was rendered
// from, decides and saves, all under the server's lock. When Save finds the file changed
// on disk by someone else, it reloads and tries once more if this rule's state is
// unchanged; otherwise it reports a conflict and writes nothing.
func (s *Server) apply(id, action, by, note, state string) (code int, kind, msg string) {
	s.mu.Lock()
	defer s.mu.Unlock()
	for attempt := 0; ; attempt++ {
		rs, err := rules.Load(s.path)
		if err != nil {
			return http.StatusInternalServerError, "error", "Reading the rule set failed: " + err.Error()
		}
		rule := rs.Rule(id)
		if rule == nil {
			return http.StatusNotFound, "error", fmt.Sprintf("The rule set has no rule %q.", id)
		}
		if got := RuleState(rule); got != state {
			return http.StatusConflict, "conflict", fmt.Sprintf(
				"Conflict: rule %s changed since this page was shown (it is now %s, with %d history entries; last: %s). Your decision to %s it was NOT saved. The page now shows the current state: review it and decide again.",
				id, rule.Status, len(rule.History), lastEvent(rule), action)
		}
		if err := rules.Decide(rs, []string{id}, action, by, note, s.now()); err != nil {
			return http.StatusBadRequest, "error", "Not saved: " + err.Error() + "."
		}
		err = rs.Save()
		if err == nil {
			past := map[string]string{rules.ActionAccept: "accepted", rules.ActionReject: "rejected", rules.ActionRetire: "retired"}[action]
			return http.StatusOK, "ok", fmt.Sprintf("Rule %s %s by %s; saved to %s.", id, past, by, s.path)
		}
		if !errors.Is(err, rules.ErrConflict) || attempt > 0 {
			return http.StatusConflict, "conflict", "Not saved: " + err.Error() + ". Reload the page and decide again."
		}
	}
}

func lastEvent(r *rules.Rule) string {
	if len(r.History) == 0 {
		return "none"
	}
	e := r.History[len(r.History)-1]
	return fmt.Sprintf("%s by %s at %s", e.Action, e.By, e.At.UTC().Format(time.RFC3339))
}

// fail answers a decision that was not saved with the page, showing the message.
func (s *Server) fail(w http.ResponseWriter, r *http.Request, code int, kind, msg string) {
	s.render(w, r, code, flash{kind, msg})
}

func (s *Server) putFlash(f flash) string {
	var b [12]byte
	rand.Read(b[:])
	id := hex.EncodeToString(b[:])
	s.fmu.Lock()
	defer s.fmu.Unlock()
	s.flashes[id] = f
	s.forder = append(s.forder, id)
	for len(s.forder) > maxFlashes {
		delete(s.flashes, s.forder[0])
		s.forder = s.forder[1:]
	}
	return id
}

func (s *Server) takeFlash(id string) flash {
	s.fmu.Lock()
	defer s.fmu.Unlock()
	f := s.flashes[id]
	delete(s.flashes, id)
	return f
}

// RuleState returns the state token of r that a decision form carries: a hash of its
// id, status and whole history. A decision is applied only while the rule's token is
// the one its form was rendered with.
func RuleState(r *rules.Rule) string {
	h := sha256.New()
	fmt.Fprintf(h, "%s\x1f%s\x1f%d", r.ID, r.Status, len(r.History))
	for _, e := range r.History {
		fmt.Fprintf(h, "\x1e%s\x1f%s\x1f%s\x1f%s", e.At.UTC().Format(time.RFC3339), e.By, e.Action, e.Note)
	}
	return hex.EncodeToString(h.Sum(nil)[:12])
}
