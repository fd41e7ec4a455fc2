module headroom

go 1.26.0

require (
	github.com/BurntSushi/toml v1.6.0 // indirect
	github.com/paulmach/orb v0.14.0 // indirect
	github.com/tidwall/geoindex v1.7.0 // indirect
	github.com/tidwall/rtree v1.10.0 // indirect
)
