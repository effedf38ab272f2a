package uncertainty_test

import (
	"fmt"

	"sluice/uncertainty"
)

// A run split into 8 jobs: the second job computes replicates 1, 9, 17, ...
func ExampleShard() {
	sh, err := uncertainty.ParseShard("2/8")
	if err != nil {
		fmt.Println(err)
		return
	}
	var mine []int
	for i := range 20 {
		if sh.Has(i) {
			mine = append(mine, i)
		}
	}
	fmt.Println(mine)
	_, err = uncertainty.ParseShard("9/8")
	fmt.Println(err)
	// Output:
	// [1 9 17]
	// uncertainty: shard "9/8": K must be between 1 and 8
}
