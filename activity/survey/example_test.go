package survey_test

import (
	"context"
	"database/sql"
	"fmt"
	"log"
	"os"
	"path/filepath"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/activity/survey"
)

// ExampleRun surveys the two demo stars held in memory, reruns the survey
// (nothing has changed, so nothing is analysed) and asks the catalogue for
// the activity-like signals.
func ExampleRun() {
	demos, err := starsim.DemoScenarios()
	if err != nil {
		log.Fatal(err)
	}
	m := &survey.Manifest{}
	for i, d := range demos {
		res, err := starsim.Simulate(d.Scenario, uint64(i+1), nil)
		if err != nil {
			log.Fatal(err)
		}
		st := &activity.Star{Name: d.Scenario.Name, RotationPeriod: d.Scenario.Star.RotationPeriod}
		m.Stars = append(m.Stars, survey.Entry{Name: d.Scenario.Name, Data: d.Name, Series: res.Series(), Star: st})
	}
	out, err := os.MkdirTemp("", "survey-example")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(out)
	opts := &survey.Options{Workers: 2, Seed: 1, SkipModels: true}
	for range 2 {
		sum, err := survey.Run(context.Background(), m, out, opts)
		if err != nil {
			log.Fatal(err)
		}
		fmt.Printf("%d stars: %d analysed, %d unchanged\n", sum.Run.Stars, sum.Run.Analysed, sum.Run.Unchanged)
	}
	db, err := sql.Open("sqlite", filepath.Join(out, survey.CatalogueFile))
	if err != nil {
		log.Fatal(err)
	}
	defer db.Close()
	var name string
	var ratio float64
	err = db.QueryRow(`SELECT s.name, g.p_over_prot FROM signals g JOIN stars s USING (star_id)
		WHERE g.verdict = 'activity-like' ORDER BY g.amplitude DESC LIMIT 1`).Scan(&name, &ratio)
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("strongest activity-like signal: %s at P/Prot = %.2f\n", name, ratio)
	// Output:
	// 2 stars: 2 analysed, 0 unchanged
	// 2 stars: 0 analysed, 2 unchanged
	// strongest activity-like signal: Corvane-3 at P/Prot = 0.50
}
