package quantize_test

import (
	"fmt"

	"ingot/quantize"
)

// Invented log10 probabilities of a toy model, stored with two bits each.
func Example() {
	logProbs := []float64{-0.3, -0.35, -0.5, -1.2, -1.25, -1.3, -2.9, -3.0, -3.1, -6.0}
	c, err := quantize.Train(logProbs, 4, quantize.LeastSquares)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("levels:", c.Values)
	i := c.Index(-1.1)
	fmt.Printf("-1.1 is stored as %d and read back as %v\n", i, c.Value(i))
	fmt.Printf("largest gap %.2f, worst error %.3f, mean squared error %.5f\n",
		c.LargestGap(), c.MaxAbsError(logProbs), quantize.MeanSquaredError(logProbs, c))
	// Output:
	// levels: [-6 -3 -1.25 -0.38333333]
	// -1.1 is stored as 2 and read back as -1.25
	// largest gap 3.00, worst error 0.117, mean squared error 0.00467
}
