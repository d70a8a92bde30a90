package estimate

// Joint tests with few clusters (METHODS §4–5, §8). A Wald test of q
// restrictions from the cluster-robust covariance leans on the G cluster
// scores, which sum to zero, so that covariance has rank at most G − 1
// (Cameron & Miller 2015, J. Human Resources 50(2), §VI.C): with q close
// to G − 1 it is nearly singular and F(q, G − 1) rejects far too often,
// and with q above G − 1 it is singular and no statistic exists. Below
// BootstrapClusters the p-value of every joint test comes from the
// restricted wild cluster bootstrap of the same Wald statistic (bootstrap.go);
// above the bound below the test is not made at all.

// NotJudged stands for a joint test that is not made because there are
// too few clusters for it: it carries no statistic and no p-value, only
// the numbers a sentence needs.
type NotJudged struct {
	// Terms is the number of restrictions tested (q).
	Terms int `json:"terms"`
	// Clusters is G; MaxTerms the most restrictions G clusters can judge.
	Clusters int `json:"clusters"`
	MaxTerms int `json:"max_terms"`
}

// maxJointTerms is the most restrictions a joint test with g clusters is
// judged on: g − 1, the rank the cluster-robust covariance can have. No
// tighter bound is needed: at q = g − 1 the restricted wild cluster
// bootstrap still holds its level in the size study (TestSizeStudyJoint,
// 2,000 data sets a row, rejections at 5% of a true null: the line's 8
// terms with 9 clusters 6.0%, 6 groups' 5 terms with 6 clusters 4.5%,
// Monte Carlo s.e. 0.5), while CR1's F(q, g − 1) rejects 88% and 67%.
// Above it the Wald statistic does not exist.
func maxJointTerms(g int) int { return g - 1 }

// judgeJoint returns nil when a joint test of q restrictions with g
// clusters can be judged, else what is said instead; g = 0 (no clusters)
// is always judged.
func judgeJoint(q, g int) *NotJudged {
	if g == 0 || q <= maxJointTerms(g) {
		return nil
	}
	return &NotJudged{Terms: q, Clusters: g, MaxTerms: maxJointTerms(g)}
}
