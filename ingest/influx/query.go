package influx

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"net/http"
	"net/url"
)

// rowFunc receives each row of a Flux result (f.newTable is true on the
// first row of a table). It reports whether it passed data on to the caller
// of the read, after which the query is no longer retried.
type rowFunc func(f *fluxCSV) (delivered bool, err error)

// run executes flux with retries and streams its rows to row as they
// arrive, never holding the whole result. start, when not nil, is called
// before every attempt so that state built by row can be reset.
//
// It posts to the query endpoint through the client library's HTTP service
// (authorization, user agent, error parsing into *http.Error) and reads
// the annotated CSV itself (see fluxCSV).
func (c *Client) run(ctx context.Context, flux string, start func(), row rowFunc) error {
	body, err := json.Marshal(map[string]any{
		"query": flux,
		"type":  "flux",
		"dialect": map[string]any{
			"header":      true,
			"delimiter":   ",",
			"annotations": []string{"datatype", "group", "default"},
		},
	})
	if err != nil {
		return err
	}
	return c.do(ctx, "query", c.opt.Bucket, func(actx context.Context, kick func()) (bool, error) {
		if start != nil {
			start()
		}
		var (
			delivered bool
			streamErr error
		)
		perr := c.client.HTTPService().DoPostRequest(actx, c.queryURL, bytes.NewReader(body),
			func(req *http.Request) { req.Header.Set("Content-Type", "application/json") },
			func(resp *http.Response) error {
				// Closing without draining drops the connection, which is
				// what an early stop wants; at the end the body is drained.
				defer resp.Body.Close()
				kick()
				f := newFluxCSV(resp.Body)
				for {
					if err := f.next(); err != nil {
						if err != io.EOF {
							streamErr = err
						}
						return nil
					}
					kick()
					d, err := row(f)
					delivered = delivered || d
					if err != nil {
						streamErr = callerError{err}
						return nil
					}
				}
			})
		if perr != nil {
			return false, perr
		}
		return delivered, streamErr
	})
}

// queryEndpoint is the Flux query URL for org: <server>/api/v2/query?org=.
func queryEndpoint(apiURL, org string) (string, error) {
	u, err := url.Parse(apiURL)
	if err != nil {
		return "", err
	}
	u = u.JoinPath("query")
	q := u.Query()
	q.Set("org", org)
	u.RawQuery = q.Encode()
	return u.String(), nil
}
