package main

import (
	"context"
	"fmt"
	"net"
	"net/http"
	"os"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"thrum/augment/online"
	"thrum/machine/ledger"
)

// serveOptions are the flags of serve.
type serveOptions struct {
	stageOptions
	Addr        string
	TokenFile   string
	MaxBatch    int
	MaxRequests int
	Ahead       int
}

// tokenEnv names the environment variable serve reads the access token
// from when --token-file is not given.
const tokenEnv = "THRUM_SERVE_TOKEN"

func newServeCmd(g *globals) *cobra.Command {
	var o serveOptions
	cmd := &cobra.Command{
		Use:   "serve PLANT.toml --out DIR",
		Short: "Serve fresh, recorded variants of the training clips to a training loop over HTTP",
		Long: `serve hands out batches of freshly drawn variants of the training clips of a split output
root (run or split first) over HTTP: GET /v1/batch?machine=M&epoch=E&batch=B&size=N&form=wave|logmel
returns a .npy array (np.load(io.BytesIO(body))), /v1/describe with the same parameters the batch's
description (clips, steps with their drawn parameters, seeds, rejections replaced), /v1/info the
machines and shapes. Variants are drawn, rendered and guarded as expand does them; eval and test
clips are never served (split=eval or split=test is refused with 403). (epoch, batch, item) and the
batch size determine every seed, so a batch is byte-identical whatever -j or the order of requests.
Every batch served is recorded in DIR/serve/<machine>.jsonl; "thrum replay --served ID" regenerates
a served item and checks it. The server listens on loopback unless --addr names another address,
which needs an access token (--token-file, or $THRUM_SERVE_TOKEN), sent as "Authorization: Bearer
<token>". SIGINT or SIGTERM stops it cleanly (exit code 0).`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if o.Out == "" {
				return &usageError{fmt.Errorf("--out is required")}
			}
			o.Command = commandLine(cmd, args)
			return runServe(cmd.Context(), g, o, args[0])
		},
	}
	cmd.Flags().StringVarP(&o.Out, "out", "o", "", "output root (required; split already run)")
	cmd.Flags().IntVarP(&o.Workers, "jobs", "j", 0, "variants rendered at once over all requests (0 = one per available CPU)")
	cmd.Flags().StringVar(&o.Addr, "addr", "127.0.0.1:8470", "address to listen on (host:port; port 0 picks a free one)")
	cmd.Flags().StringVar(&o.TokenFile, "token-file", "", "file holding the access token (required when --addr is not loopback, unless $"+tokenEnv+" is set)")
	cmd.Flags().IntVar(&o.MaxBatch, "max-batch", online.DefaultMaxBatch, fmt.Sprintf("largest batch size a request may ask for (1 … %d)", online.MaxMaxBatch))
	cmd.Flags().IntVar(&o.MaxRequests, "max-requests", online.DefaultMaxRequests, "batch requests handled at once; more get 429")
	cmd.Flags().IntVar(&o.Ahead, "ahead", online.DefaultAhead, "batches prepared ahead of each one served (0 = none)")
	o.addLockFlag(cmd)
	return cmd
}

func runServe(ctx context.Context, g *globals, o serveOptions, plantPath string) error {
	host, _, err := net.SplitHostPort(o.Addr)
	if err != nil {
		return &usageError{fmt.Errorf("--addr %q: %v", o.Addr, err)}
	}
	token, err := serveToken(o.TokenFile)
	if err != nil {
		return err
	}
	if !loopback(host) && token == "" {
		return &usageError{fmt.Errorf("--addr %s is not loopback: an access token is required (--token-file FILE or $%s)", o.Addr, tokenEnv)}
	}
	if o.MaxBatch < 1 || o.MaxBatch > online.MaxMaxBatch {
		return &usageError{fmt.Errorf("--max-batch %d outside 1 … %d", o.MaxBatch, online.MaxMaxBatch)}
	}
	if o.MaxRequests < 1 || o.MaxRequests > 256 {
		return &usageError{fmt.Errorf("--max-requests %d outside 1 … 256", o.MaxRequests)}
	}
	if o.Ahead < 0 || o.Ahead > 16 {
		return &usageError{fmt.Errorf("--ahead %d outside 0 … 16", o.Ahead)}
	}
	inv, err := loadPlant(ctx, plantPath, o.Out)
	if err != nil {
		return err
	}
	for _, pr := range inv.Problems {
		fmt.Fprintf(g.stderr, "survey: %s\n", pr)
	}
	lock, err := holdOut(ctx, g, inv.Plant, o.stageOptions, ledger.Shard{})
	if err != nil {
		return err
	}
	defer lock.Release()
	ahead := o.Ahead
	if ahead == 0 {
		ahead = -1
	}
	s, err := online.New(inv, online.Options{Out: o.Out, Workers: o.Workers, MaxBatch: o.MaxBatch, MaxRequests: o.MaxRequests, Ahead: ahead})
	if err != nil {
		return err
	}
	defer s.Close()
	ln, err := net.Listen("tcp", o.Addr)
	if err != nil {
		return fmt.Errorf("serve: %w", err)
	}
	srv := &http.Server{Handler: s.Handler(token), ReadHeaderTimeout: 10 * time.Second,
		BaseContext: func(net.Listener) context.Context { return ctx }}
	for _, in := range s.Info().Machines {
		fmt.Fprintf(g.stderr, "serve: %s: %d training clips of %d frames; log-mel %d × %d\n", in.Machine, in.TrainingClips, in.ClipFrames, in.LogMelFrames, in.LogMelBands)
	}
	fmt.Fprintf(g.stdout, "serving http://%s/v1/ (Ctrl-C stops)\n", ln.Addr())
	done := make(chan error, 1)
	go func() { done <- srv.Serve(ln) }()
	select {
	case err := <-done:
		return fmt.Errorf("serve: %w", err)
	case <-ctx.Done():
	}
	// stop accepting, let running requests end (they see the cancelled
	// context), then close the record
	sctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	if err := srv.Shutdown(sctx); err != nil {
		srv.Close()
	}
	<-done
	if err := s.Close(); err != nil {
		return err
	}
	fmt.Fprintln(g.stderr, "serve: stopped; every batch served is in", o.Out+string(os.PathSeparator)+online.RecordDir)
	return nil
}

// serveToken reads the access token from a file, else from the
// environment ("" when neither gives one).
func serveToken(file string) (string, error) {
	if file == "" {
		return strings.TrimSpace(os.Getenv(tokenEnv)), nil
	}
	b, err := os.ReadFile(file)
	if err != nil {
		return "", fmt.Errorf("serve: token file: %w", err)
	}
	t := strings.TrimSpace(string(b))
	if t == "" {
		return "", fmt.Errorf("serve: token file %s is empty", file)
	}
	return t, nil
}

// loopback reports whether host names the loopback interface only.
func loopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}
