package reports

import "github.com/xuri/excelize/v2"

// SheetDefinitions explains every column and measure in plain words.
const SheetDefinitions = "Definitions"

// Definition is one term of the workbook.
type Definition struct {
	Term, Meaning, MayConclude, MayNot, Source string
}

// Definitions lists every measure the workbook shows.
var Definitions = []Definition{
	{"window", "One short stretch of wear time (for example one minute) summarized by the device software into features.", "", "", "the input table"},
	{"feature", "A number computed for each window, such as the mean of one axis or the spread of the acceleration magnitude.", "", "", "the input table"},
	{"within-participant step", "Each participant's features are shifted by that participant's own median over their quietest windows (or their overall median, or scaled by their spread), for the features that carry device offsets.", "Differences left after it are not due to how a device sat on the wrist.", "It does not correct every device difference, such as a miscalibrated sensor gain.", "common practice; rest baseline as described in the README"},
	{"ICC(1)", "Intra-class correlation: the share of a feature's variance that lies between participants rather than within them.", "A high value (close to 1) means the feature mostly tells participants apart, often because of device offsets. The Data quality sheet gives it before and after the within-participant step: a touched feature that stays high after it carries offsets the step could not remove, such as one that changes the feature non-linearly.", "It does not say whether those differences are physiological or technical.", "Shrout & Fleiss (1979), Psychol. Bull. 86:420–428"},
	{"movement state", "A kind of window that recurs across the cohort, found by k-means on windows pooled from everyone; named S1, S2, … and described by its mean features.", "Windows in the same state look alike in their features.", "A state is not a named activity; its link to activities shows only in the table against known labels, when given.", "k-means++: Arthur & Vassilvitskii (2007); Hamerly (2010)"},
	{"signature share", "The share of a participant's windows that fall in a state. A participant's shares add up to 100 %.", "How a participant's wear time divides among the states.", "Shares depend on wear time and protocol; compare participants measured alike.", "this tool"},
	{"bout length", "The mean number of consecutive windows a participant stays in a state before changing.", "Longer bouts mean that state comes in longer stretches.", "Gaps in wear are not marked: windows are taken in order as they come.", "this tool"},
	{"group", "Participants whose signatures are alike, found by the grouping method; named G1, G2, … from the largest.", "Members of a group divide their time among the states in a similar way.", "A group is not a diagnosis or a clinical category, and membership is not a judgement on a person.", "Ward (1963); Kaufman & Rousseeuw (1990)"},
	{"silhouette", "For one participant: how much closer it is to its own group than to the next nearest group, from −1 to 1.", "Near 1: clearly in its group. Near 0: between two groups. Below 0: closer to another group.", "A low value does not mean the data are wrong; it means the participant sits between groups.", "Rousseeuw (1987), J. Comput. Appl. Math. 20:53–65"},
	{"weak fit", "A flag for participants with a silhouette below 0.25, or below 0 (closer to another group).", "Their group is a loose description of them.", "", "threshold after Kaufman & Rousseeuw (1990), ch. 2"},
	{"distance to centre", "How far a participant's signature lies from its group's centre in the grouping space.", "Larger means less typical of the group.", "", "this tool"},
	{"Calinski–Harabasz", "Ratio of spread between states (or groups) to spread within them; larger is better.", "Used here to choose the number of states.", "", "Caliński & Harabasz (1974), Commun. Stat. 3:1–27"},
	{"Davies–Bouldin", "Average similarity of each state to its most similar other state; smaller is better.", "", "", "Davies & Bouldin (1979), IEEE TPAMI 1:224–227"},
	{"gap statistic", "How much tighter the groups are than groups found in structureless reference data of the same extent.", "Used by default to choose the number of groups: the smallest number whose gap is within one standard error of the next.", "", "Tibshirani, Walther & Hastie (2001), J. R. Stat. Soc. B 63:411–423"},
	{"stability", "Mean adjusted Rand index between the groups of bootstrap resamples and the groups of all participants.", "Near 1: the grouping barely changes when participants are resampled.", "High stability alone often favours too few groups.", "Lange et al. (2004), Neural Comput. 16:1299–1323"},
	{"ε² (epsilon squared)", "Effect size of the Kruskal–Wallis test: the share of rank variance explained by the groups, from 0 to 1.", "Which variables differ most between the groups.", "It describes the groups found in these data; it is not evidence that the groups exist in the population.", "Kruskal & Wallis (1952); Tomczak & Tomczak (2014)"},
	{"H, p", "Kruskal–Wallis statistic and its χ² p-value.", "", "The groups were found on the same data, so p-values are descriptive and not confirmatory.", "Kruskal & Wallis (1952), JASA 47:583–621"},
	{"q (BH)", "Benjamini–Hochberg adjusted p-value over all variables tested.", "", "Descriptive only, for the same reason as p.", "Benjamini & Hochberg (1995), J. R. Stat. Soc. B 57:289–300"},
	{"Cliff δ", "For one group against the rest: the chance that a member has a larger value minus the chance it has a smaller one, from −1 to 1.", "Sign and size of a group's difference from the others.", "", "Cliff (1993), Psychol. Bull. 114:494–509"},
	{"median, IQR", "The middle value of a group and the range of its middle half (first to third quartile).", "", "", "common practice"},
	{"adjusted Rand index", "Agreement between two ways of dividing the same items, 1 for identical and about 0 for chance.", "", "", "Hubert & Arabie (1985), J. Classif. 2:193–218"},
	{"normalized mutual information", "Shared information between two labelings, from 0 to 1.", "", "", "Vinh, Epps & Bailey (2010), JMLR 11:2837–2854"},
	{"Hellinger, Aitchison, Jensen–Shannon", "Distances between signatures: of square-rooted shares; of log-ratios of shares (zeros replaced by a small value); and an information distance.", "", "", "Rao (1995); Aitchison (1986); Martín-Fernández et al. (2003); Endres & Schindelin (2003)"},
}

func definitionsSheet(f *excelize.File, st *styles, r *Result) error {
	t, err := newTable(f, st, SheetDefinitions, []float64{24, 60, 44, 44, 36})
	if err != nil {
		return err
	}
	if err := t.freeze(1); err != nil {
		return err
	}
	if err := t.heading("term", "what it is", "what a reader may conclude", "what a reader may not conclude", "published source"); err != nil {
		return err
	}
	for _, d := range Definitions {
		if err := t.put(v{d.Term, st.header}, v{d.Meaning, st.wrap}, v{d.MayConclude, st.wrap}, v{d.MayNot, st.wrap}, v{d.Source, st.wrap}); err != nil {
			return err
		}
	}
	t.blank()
	for _, c := range Cautions {
		if err := t.put(v{"caution", st.warn}, v{c, st.note}); err != nil {
			return err
		}
	}
	return t.close(false)
}
