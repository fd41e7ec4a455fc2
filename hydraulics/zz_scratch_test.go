package hydraulics

import "testing"

func BenchmarkZZFire20kSparse(b *testing.B) { benchmarkFireFlow(b, 124, 100) }
