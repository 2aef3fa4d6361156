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
	{"within-participant step", "By default (align) each participant's device is aligned with the movement states: how it sat turned on the wrist, and its offset on every feature, are measured against the states the participant's windows fall in and removed. Other steps shift each participant's features by the median of their quietest windows or their overall median, or also scale them by their spread.", "Differences left after it are not due to how a device sat on the wrist, or to its calibration.", "It cannot tell a device offset that is the same for everyone in a group from a real difference of that group.", "block coordinate descent by least squares, with split-and-merge moves where two states hold one posture (Ueda et al. 2000, Neural Computation 12:2109–2128); rotation: Kabsch (1976), Acta Cryst. A32:922–923"},
	{"device turned (degrees)", "How far the align step turned a participant's axis means to match the cohort's states. The axis spreads and correlations (as one covariance) and any angle of the axis means, such as a tilt, are turned with them when the data hold them; the Summary's notes name them.", "Large values point to a device worn turned or on the other wrist.", "", "Kabsch (1976); a covariance turns as R C Rᵀ (common practice)"},
	{"ICC(1)", "Intra-class correlation: the share of a feature's variance that lies between participants rather than within them.", "A high value (close to 1) means the feature mostly tells participants apart, often because of device offsets. The Data quality sheet gives it before and after the within-participant step: a touched feature that stays high after it carries offsets the step could not remove, such as one that changes the feature non-linearly.", "It does not say whether those differences are physiological or technical.", "Shrout & Fleiss (1979), Psychol. Bull. 86:420–428"},
	{"movement state", "A kind of window that recurs across the cohort, found by k-means on windows pooled from everyone; named S1, S2, … and described by its mean features.", "Windows in the same state look alike in their features.", "A state is not a named activity; its link to activities shows only in the table against known labels, when given.", "k-means++: Arthur & Vassilvitskii (2007); Hamerly (2010)"},
	{"number of states", "Up to 12 states are fitted; neighbouring states whose windows form one mode are then merged. The participants in the fitting sample are grouped over the merged states and over the states as fitted, and the states as fitted are kept only when their grouping is clearly more stable, by more than one standard error, or when over them the participants fall into more groups that are both more stable than the merged states can give and more clearly apart (a larger gap statistic), or into as many groups, as stably and more clearly apart; the Summary says which.", "The number of states is the one that serves the grouping of participants, not the one that best describes the windows.", "More states are harder to read one by one; read them through the groups' lines.", "merging: after Hennig (2010), Adv. Data Anal. Classif. 4:3–34; stability: Lange et al. (2004), Neural Comput. 16:1299–1323; one-standard-error rule: Breiman et al. (1984); gap statistic: Tibshirani et al. (2001), J. R. Stat. Soc. B 63:411–423"},
	{"fits of the states", "With --fits above 1 the states are fitted that many times from different random starts; the participants in the fitting sample are grouped over each fit's states, and the fit kept is the one whose grouping agrees best with the others' (adjusted Rand index). The Summary gives the agreement.", "Agreement near 1: the groups do not depend on where the fit started.", "Below 0.6 some fits group the participants differently: the groups depend on the random start. On the tool's synthetic test cohorts such disagreement marked 6 of 10 groupings that missed the planted groups, and 11 of 390 that did not.", "medoid of partitions: after Strehl & Ghosh (2002), J. Mach. Learn. Res. 3:583–617; adjusted Rand index: Hubert & Arabie (1985), J. Classif. 2:193–218"},
	{"stillness, light, moderate, vigorous movement", "Words for a state's intensity: where its amplitude features (spreads, peaks, powers of the signal) lie between the cohort's stillest state and its most vigorous one. With known labels, a state is called by its most common label instead.", "How the states rank by how much the device moved.", "The words are relative to this cohort's states, not standard intensity thresholds, and say nothing about energy expenditure.", "this tool"},
	{"signature share", "The share of a participant's windows that fall in a state. A participant's shares add up to 100 %.", "How a participant's wear time divides among the states.", "Shares depend on wear time and protocol; compare participants measured alike.", "this tool"},
	{"bout length", "The mean number of consecutive windows a participant stays in a state before changing; in minutes as well when the window length is known. A group's bout length is averaged over its members who enter the state at all, and the separating variables test it over them.", "Longer bouts mean that state comes in longer stretches.", "Gaps in wear are not marked: windows are taken in order as they come.", "this tool"},
	{"participant-wave", "With a wave column, each visit of a participant is grouped on its own; people are counted apart.", "How a person's movement changed between visits.", "A person's waves are not independent people: the separating-variable tests count each person once.", "this tool"},
	{"group", "Participants whose signatures are alike, found by the grouping method; named G1, G2, … from the largest. A refresh keeps an earlier group's name while it is still the same group (first by its people: a group holding most of an earlier group's returning members, who are most of its own, keeps that name; otherwise by its centre) and numbers new groups on from the earlier ones.", "Members of a group divide their time among the states in a similar way.", "A group is not a diagnosis or a clinical category, and membership is not a judgement on a person.", "Ward (1963); Kaufman & Rousseeuw (1990)"},
	{"silhouette", "For one participant: how much closer it is to its own group than to the next nearest group, from −1 to 1.", "Near 1: clearly in its group. Near 0: between two groups. Below 0: closer to another group.", "A low value does not mean the data are wrong; it means the participant sits between groups.", "Rousseeuw (1987), J. Comput. Appl. Math. 20:53–65"},
	{"weak fit", "A flag for participants with a silhouette below 0.25, or below 0 (closer to another group).", "Their group is a loose description of them.", "", "threshold after Kaufman & Rousseeuw (1990), ch. 2"},
	{"atypical", "A participant placed with a frozen model who lies farther from every group centre than 99 % of the members the model was fitted on.", "The model's groups do not describe this participant; check the data (a change of device or unit) before anything else.", "It is not a clinical finding.", "this tool"},
	{"stability of the grouping as a whole", "The participants are drawn again with replacement and grouped anew many times with the same number of groups; the grouping's stability is the mean adjusted Rand index between the groups and those found anew.", "Below 0.8 the grouping is flagged as tentative: on the tool's benchmark of invented cohorts, most groupings below it had missed the planted groups, and most that missed them were below it.", "A stable grouping can still be the wrong one, and a tentative one can be right.", "Lange, Roth, Braun & Buhmann (2004), Neural Comput. 16:1299–1323"},
	{"bootstrap stability of a group", "The participants are drawn again with replacement and grouped anew many times; a group's stability is the mean of its best Jaccard similarity with a group found anew.", "Above about 0.75 a group holds; below 0.6 it is flagged as unstable and should not be relied on.", "A stable group is not thereby a meaningful one.", "Hennig (2007), Comput. Stat. Data Anal. 52:258–271"},
	{"stays with its group", "For one participant: the share of the resamples, among those that drew it, in which it landed in the group that matches its own.", "Low values mark participants whose group depends on who else is in the cohort.", "", "after Hennig (2007)"},
	{"distance to centre", "How far a participant's signature lies from its group's centre in the grouping space.", "Larger means less typical of the group.", "", "this tool"},
	{"Calinski–Harabasz", "Ratio of spread between states (or groups) to spread within them; larger is better.", "Used here to choose the number of states.", "", "Caliński & Harabasz (1974), Commun. Stat. 3:1–27"},
	{"Davies–Bouldin", "Average similarity of each state to its most similar other state; smaller is better.", "", "", "Davies & Bouldin (1979), IEEE TPAMI 1:224–227"},
	{"gap statistic", "How much tighter the groups are than groups found in structureless reference data of the same extent.", "Used by default to choose the number of groups: the smallest number whose gap is within one standard error of the next, then one group fewer while the grouping with one fewer is clearly more stable (its bootstrap stability higher by more than 0.1); and when that grouping is tentative (bootstrap stability below 0.8), the largest smaller number whose grouping is not.", "", "Tibshirani, Walther & Hastie (2001), J. R. Stat. Soc. B 63:411–423"},
	{"stability (number of groups)", "Mean adjusted Rand index between the groups of bootstrap resamples and the groups of all participants.", "Near 1: the grouping barely changes when participants are resampled.", "High stability alone often favours too few groups.", "Lange et al. (2004), Neural Comput. 16:1299–1323"},
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
	for _, c := range CautionsFor(r) {
		if err := t.put(v{"caution", st.warn}, v{c, st.note}); err != nil {
			return err
		}
	}
	return t.close(false)
}
