package runs_test

import (
	"fmt"

	"maserpol/runs"
)

// A cluster job array with 8 tasks runs "maserpol run study.toml --shard
// $TASK/8"; task 3 gets the models with index 2, 10, 18, ...
func ExampleParseShard() {
	sh, err := runs.ParseShard("3/8")
	if err != nil {
		panic(err)
	}
	var mine []int
	for i := 0; i < 30; i++ {
		if sh.Holds(i) {
			mine = append(mine, i)
		}
	}
	fmt.Println(sh, mine)
	// Output: 3/8 [2 10 18 26]
}
