// Package scoring turns each pipe's hydraulic checks into normalised sub-scores, weights them into one
// 0–100 priority score, ranks the pipes and explains each rank in plain words.
package scoring
