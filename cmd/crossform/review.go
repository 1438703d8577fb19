package main

import (
	"context"
	"fmt"
	"io"
	"time"

	"github.com/spf13/cobra"

	"github.com/crossform/crossform/review"
)

type reviewOptions struct {
	g      *globalOptions
	data   dataFlags
	in     reviewInputFlags
	path   string
	addr   string
	port   int
	title  string
	ctx    context.Context
	stdout io.Writer
	// ready, when set, is called with the page's URL once the server listens (tests).
	ready func(url string)
}

func newReviewCmd(g *globalOptions, runF func(*reviewOptions) error) *cobra.Command {
	o := &reviewOptions{g: g}
	cmd := &cobra.Command{
		Use:   "review PATH --rules FILE",
		Short: "Serve the report on this machine with forms to accept, reject or retire each rule",
		Long: `review computes the same report as the report command and serves it on a
loopback address of this machine (127.0.0.1 and a free port unless --port),
printing the page's URL on stdout. Each rule's card has a form to accept,
reject or retire it, with the reviewer's name and a note. Each decision is
written to the rule set at once, atomically, and appended to the rule's
history; nothing else is ever written. A decision on a rule that changed since
the page was shown (another reviewer, another program) is refused with a
message, never applied over the change.

The server answers only requests addressed to 127.0.0.1, localhost or [::1]
and forms carrying the token it drew at start. Stop it with Ctrl-C.`,
		Example: `  crossform review demo/extract-1 --rules rules.yaml
  crossform review demo/extract-1 --rules rules.yaml --port 8765`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.path, o.stdout, o.ctx = args[0], cmd.OutOrStdout(), cmd.Context()
			if o.in.rules == "" {
				return usageError{fmt.Errorf("--rules FILE is required")}
			}
			if runF != nil {
				return runF(o)
			}
			return reviewRun(o)
		},
	}
	o.data.register(cmd)
	o.in.register(cmd)
	f := cmd.Flags()
	f.StringVar(&o.addr, "addr", "127.0.0.1", "loopback address to listen on: 127.0.0.1, ::1 or localhost")
	f.IntVar(&o.port, "port", 0, "port to listen on (default: a free port)")
	f.StringVar(&o.title, "title", "", "title of the page (default \"crossform review report\")")
	return cmd
}

func reviewRun(o *reviewOptions) error {
	ln, err := review.Listen(o.addr, o.port)
	if err != nil {
		return usageError{err}
	}
	defer ln.Close()
	data, rs, err := buildReport(o.ctx, o.g, &o.data, o.path, &o.in, time.Time{})
	if err != nil {
		return err
	}
	data.Title = o.title
	srv, err := review.NewServer(rs.Path, data, nil)
	if err != nil {
		return err
	}
	url := review.URL(ln)
	fmt.Fprintln(o.stdout, url)
	o.g.log.Info("review page ready; stop with Ctrl-C", "url", url, "rules", rs.Path)
	if o.ready != nil {
		o.ready(url)
	}
	ctx := o.ctx
	if ctx == nil {
		ctx = context.Background()
	}
	return srv.Serve(ctx, ln)
}
