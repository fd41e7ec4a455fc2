module headroom

go 1.26.0

require (
	github.com/BurntSushi/toml v1.6.0
	github.com/paulmach/orb v0.14.0
	github.com/tidwall/rtree v1.10.0
)

require (
	github.com/tidwall/geoindex v1.7.0 // indirect
	go.mongodb.org/mongo-driver/v2 v2.5.0 // indirect
)
