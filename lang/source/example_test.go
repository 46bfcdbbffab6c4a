package source_test

import (
	"fmt"

	"github.com/formwright/formwright/lang/source"
)

func ExampleSuggest() {
	fmt.Println(source.Suggest("kapa", []string{"sigma", "kappa", "nu"}))
	// Output: kappa
}
