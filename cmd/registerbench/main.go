// Command registerbench times the reports on a large generated register: it builds a
// register of invented shipments (1,000,000 by default, over five years) in a fresh
// database, times the store queries behind ConsumptionService.GetConsumption, GetBaseline
// and AssessCompliance (medians of -rounds rounds), and prints the query plans
// (EXPLAIN (ANALYZE, BUFFERS)) of the register's aggregate queries.
//
//	go run ./cmd/registerbench              # private cluster in a temporary directory
//	go run ./cmd/registerbench -database-url postgres://postgres@127.0.0.1:5432/postgres
//
// With -database-url (default: $TEST_DATABASE_URL) it creates a database of its own on
// that server, named halovet_registerbench_<pid>, and drops it at the end. Every figure of
// the register is INVENTED (see generate.go); the timings are for comparison within one
// run, as ratios to the baseline query printed beside them.
package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"runtime"
	"slices"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/pglocal"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/terms"
)

func main() {
	n := flag.Int("shipments", 1_000_000, "invented shipments to generate (at least 1)")
	firstYear := flag.Int("first-year", 2021, "first year of the register")
	years := flag.Int("years", 5, "years the shipments are spread over (at least 1)")
	rounds := flag.Int("rounds", 3, "timed rounds per report; the median is printed (at least 1)")
	dbURL := flag.String("database-url", os.Getenv("TEST_DATABASE_URL"), "PostgreSQL server to create the benchmark's own database on (an admin URL); empty starts a private cluster in a temporary directory")
	plans := flag.Bool("plans", true, "print EXPLAIN (ANALYZE, BUFFERS) of the register queries")
	flag.Usage = func() {
		fmt.Fprintf(os.Stderr, "usage: registerbench [flags]\n\nBuilds a register of invented shipments in a fresh database and times the report queries on it.\n\n")
		flag.PrintDefaults()
	}
	flag.Parse()
	if *n < 1 || *years < 1 || *rounds < 1 {
		fmt.Fprintln(os.Stderr, "registerbench: -shipments, -years and -rounds must each be at least 1")
		os.Exit(2)
	}
	if err := run(context.Background(), *dbURL, *n, *firstYear, *years, *rounds, *plans); err != nil {
		fmt.Fprintln(os.Stderr, "registerbench:", err)
		os.Exit(1)
	}
}

func run(ctx context.Context, admin string, n, firstYear, years, rounds int, plans bool) error {
	if admin == "" {
		tmp, err := os.MkdirTemp("", "halovet-registerbench-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(tmp)
		c, err := pglocal.Start(ctx, pglocal.Options{DataDir: tmp + "/pg", Ephemeral: true})
		if err != nil {
			return err
		}
		defer func() { _ = c.Stop(context.Background()) }()
		admin = c.URL("postgres")
	}
	name := fmt.Sprintf("halovet_registerbench_%d", os.Getpid())
	url, drop, err := createDatabase(ctx, admin, name)
	if err != nil {
		return err
	}
	defer drop()
	if _, err := store.Migrate(ctx, url); err != nil {
		return err
	}
	st, err := store.Open(ctx, url)
	if err != nil {
		return err
	}
	defer st.Close()

	t0 := time.Now()
	if err := Generate(ctx, st.Pool(), n, firstYear, years); err != nil {
		return err
	}
	fmt.Printf("Register benchmark (`make bench-register`): %d invented shipments over %d–%d generated in %v. Machine: %d CPUs, %s; medians of %d rounds.\n\n",
		n, firstYear, firstYear+years-1, time.Since(t0).Round(time.Millisecond), runtime.NumCPU(), runtime.Version(), rounds)

	all := yearRange(firstYear, firstYear+years-1)
	last := []int{firstYear + years - 1}
	base := all[:min(3, len(all))]
	cases := []struct {
		name  string
		years []int
	}{
		{"GetConsumption, one year", last},
		{"GetBaseline, three years", base},
		{"AssessCompliance, every year", all},
	}
	// Each report twice in every round: by the join over the register (the query before
	// migration 12: the baseline) and by the yearly totals (now), interleaved.
	before := make([][]time.Duration, len(cases))
	now := make([][]time.Duration, len(cases))
	var imports []time.Duration
	for r := 0; r < rounds+1; r++ { // round 0 warms the cache and is not counted
		for i, c := range cases {
			d, err := timed(func() error { return loadConsumption(ctx, st, c.years, true) })
			if err != nil {
				return fmt.Errorf("%s by the join: %w", c.name, err)
			}
			d2, err := timed(func() error { return loadConsumption(ctx, st, c.years, false) })
			if err != nil {
				return fmt.Errorf("%s: %w", c.name, err)
			}
			if r > 0 {
				before[i], now[i] = append(before[i], d), append(now[i], d2)
			}
		}
		d, err := timed(func() error {
			_, err := st.CompanyImports(ctx, []string{"C/I", "F"}, terms.QuotaCO2eTonnes, all)
			return err
		})
		if err != nil {
			return fmt.Errorf("company imports: %w", err)
		}
		if r > 0 {
			imports = append(imports, d)
		}
	}
	fmt.Println("| report (the store queries behind it) | years | join over the register (baseline) | yearly totals (now) | now / baseline |")
	fmt.Println("|---|---|---:|---:|---:|")
	for i, c := range cases {
		b, m := median(before[i]), median(now[i])
		fmt.Printf("| %s | %s | %s | %s | %.4f |\n", c.name, yearsText(c.years), ms(b), ms(m), float64(m)/float64(b))
	}
	fmt.Printf("\nPlanQuotas' company imports (CompanyImports, every year, C/I and F in CO2-eq t; a scan of the register): %s, %.2f of the compliance baseline.\n",
		ms(median(imports)), float64(median(imports))/float64(median(before[len(cases)-1])))
	if !plans {
		return nil
	}
	for _, q := range planQueries(all) {
		fmt.Printf("\n### %s\n\n```\n", q.name)
		rows, err := st.Pool().Query(ctx, "EXPLAIN (ANALYZE, BUFFERS) "+q.sql, q.args...)
		if err != nil {
			return fmt.Errorf("explain %s: %w", q.name, err)
		}
		lines, err := pgx.CollectRows(rows, pgx.RowTo[string])
		if err != nil {
			return fmt.Errorf("explain %s: %w", q.name, err)
		}
		fmt.Println(strings.Join(lines, "\n"))
		fmt.Println("```")
	}
	return nil
}

func timed(f func() error) (time.Duration, error) {
	t := time.Now()
	err := f()
	return time.Since(t), err
}

// loadConsumption makes the store calls the service's loadConsumption makes for years:
// what GetConsumption, GetBaseline and AssessCompliance read from the register. byJoin
// sums the shipments with the join the store ran before the yearly totals.
func loadConsumption(ctx context.Context, st *store.Store, years []int, byJoin bool) error {
	if byJoin {
		rows, err := st.Pool().Query(ctx, store.ShipmentTotalsJoinSQL, years)
		if err != nil {
			return err
		}
		for rows.Next() {
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return err
		}
	} else if _, err := st.ShipmentTotals(ctx, years); err != nil {
		return err
	}
	if _, err := st.NationalTotals(ctx, years); err != nil {
		return err
	}
	_, err := st.ShipmentYears(ctx)
	return err
}

// companyImportsSQL is CompanyImports' query in CO2-eq t (store/consumption.go).
const companyImportsSQL = `SELECT company_id, year, sum(co2e_tonnes)::float8
    FROM (SELECT s.company_id, s.year, unnest(s.component_annex_groups) AS annex_group,
            unnest(s.component_mass_kg) AS mass_kg, unnest(s.component_odp_tonnes) AS odp_tonnes,
            unnest(s.component_co2e_tonnes) AS co2e_tonnes
        FROM shipments s
        WHERE s.direction = 'import' AND s.counts_in_consumption AND s.state = 'live' AND s.year = ANY($2)) c
    WHERE c.annex_group = ANY($1)
    GROUP BY company_id, year ORDER BY company_id, year`

type planQuery struct {
	name string
	sql  string
	args []any
}

// planQueries are the register's report queries, as the store runs them.
func planQueries(all []int) []planQuery {
	return []planQuery{
		{"ShipmentTotals by the join over the register (baseline), every year", store.ShipmentTotalsJoinSQL, []any{all}},
		{"ShipmentTotals by the yearly totals (now), every year", store.ShipmentTotalsSQL, []any{all}},
		{"CompanyImports (PlanQuotas), every year", companyImportsSQL, []any{[]string{"C/I", "F"}, all}},
		{"ShipmentYears", store.ShipmentYearsSQL, nil},
	}
}

func createDatabase(ctx context.Context, admin, name string) (string, func(), error) {
	conn, err := pgx.Connect(ctx, admin)
	if err != nil {
		return "", nil, fmt.Errorf("connecting to %s: %w", store.Redact(admin), err)
	}
	defer conn.Close(ctx)
	id := pgx.Identifier{name}.Sanitize()
	if _, err := conn.Exec(ctx, "CREATE DATABASE "+id); err != nil {
		return "", nil, fmt.Errorf("creating database %s: %w", name, err)
	}
	cfg, err := pgx.ParseConfig(admin)
	if err != nil {
		return "", nil, err
	}
	cfg.Database = name
	url := fmt.Sprintf("postgres://%s@%s:%d/%s", cfg.User, cfg.Host, cfg.Port, name)
	if cfg.Password != "" {
		url = fmt.Sprintf("postgres://%s:%s@%s:%d/%s", cfg.User, cfg.Password, cfg.Host, cfg.Port, name)
	}
	drop := func() {
		c, err := pgx.Connect(context.Background(), admin)
		if err != nil {
			fmt.Fprintln(os.Stderr, "registerbench: dropping", name, ":", err)
			return
		}
		defer c.Close(context.Background())
		if _, err := c.Exec(context.Background(), "DROP DATABASE IF EXISTS "+id+" WITH (FORCE)"); err != nil {
			fmt.Fprintln(os.Stderr, "registerbench: dropping", name, ":", err)
		}
	}
	return url, drop, nil
}

func yearRange(from, to int) []int {
	var out []int
	for y := from; y <= to; y++ {
		out = append(out, y)
	}
	return out
}

func yearsText(ys []int) string {
	if len(ys) == 1 {
		return fmt.Sprint(ys[0])
	}
	return fmt.Sprintf("%d–%d", ys[0], ys[len(ys)-1])
}

func median(xs []time.Duration) time.Duration {
	s := slices.Clone(xs)
	slices.Sort(s)
	return s[len(s)/2]
}

func ms(d time.Duration) string { return fmt.Sprintf("%.1f ms", float64(d)/float64(time.Millisecond)) }
