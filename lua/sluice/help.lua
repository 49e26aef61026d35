-- sluice.help: the one place where every function is described.  help()
-- lists them by topic, help "name" shows one; docs/functions.md is built
-- from these entries (make docs) and a test checks it is up to date.
local H = {}

H.caution = [[
Estimates rest on the assumptions written into the causal graph. They are no
substitute for qualified epidemiological or clinical judgement, nor for the
local rules that govern health data.]]

H.topics = {
  {"graph",     "Writing a causal graph"},
  {"structure", "Asking about its structure"},
  {"adjust",    "Trails, separation and adjustment sets"},
  {"data",      "Data frames"},
  {"estimate",  "Models and effect estimates"},
  {"model",     "Models with a known truth, and the comparison"},
  {"picture",   "Pictures and text views"},
  {"session",   "The session"},
}

-- name, topic, signature, returns, summary, example
H.entries = {
  { name = "graph", topic = "graph",
    sig = "graph(text)",
    returns = "an immutable graph",
    summary = [[Parse the graph notation. `a -> b` (a causes b), `a <- b`, `a <-> b`
(a and b share a hidden common cause), chains `a -> b -> c`, lists
`a, b -> c`, `hidden u, v` (never measured), a name alone for an isolated
node, "quoted names" for spaces or any UTF-8. Statements end at a newline
or `;`; `#` starts a comment. Errors give the line and column with a caret.
A bare name may not hold a character that prints as nothing or a blank
(zero-width space, no-break space, direction marks, a byte-order mark past
the start): quote it, or write it as \u{200B} inside the quotes, which is
also how tostring(g) shows it.]],
    example = [=[g = graph [[
  rain -> soil -> yield
  rain -> yield
  hidden pests
  pests -> yield; pests -> soil
]]]=] },
  { name = "read_graph", topic = "graph",
    sig = "read_graph(path)",
    returns = "an immutable graph",
    summary = "Read a file written in the graph notation. Errors name the file, line and column.",
    example = [[g = read_graph "examples/orchard.graph"]] },
  { name = "g:with", topic = "graph",
    sig = "g:with(text)",
    returns = "a new graph",
    summary = "Add nodes, edges or hidden marks. The result holds g and everything text declares (same notation).",
    example = [[g2 = g:with "frost -> yield"]] },
  { name = "g:without", topic = "graph",
    sig = "g:without(text)",
    returns = "a new graph",
    summary = [[Remove edges or nodes. The edges named in text go, and a node named alone goes
with all its edges. Every name and edge must exist.]],
    example = [[g2 = g:without "rain -> yield; pests"]] },
  { name = "tostring", topic = "graph",
    sig = "tostring(g)",
    returns = "text in the graph notation",
    summary = [[The canonical notation of g. Hidden declarations come first, then one line per
node with its arrows, sorted by name. It parses back to an equal graph (g1 == g2
compares graphs).]],
    example = [[print(tostring(g))]] },
  { name = "g:nodes", topic = "structure",
    sig = "g:nodes()",
    returns = "list of names, sorted",
    summary = "Every node, hidden ones included. #g is the number of nodes.",
    example = [[g:nodes()]] },
  { name = "g:edges", topic = "structure",
    sig = "g:edges()",
    returns = "list of {from=, to=, kind=}",
    summary = [[Every edge; kind is "->" or "<->". Directed edges come first, each sorted by
(from, to).]],
    example = [[for _, e in ipairs(g:edges()) do print(e.from, e.kind, e.to) end]] },
  { name = "g:hidden", topic = "structure",
    sig = "g:hidden()",
    returns = "list of names, sorted",
    summary = "The nodes declared hidden. They are never measured and never adjusted for.",
    example = [[g:hidden()]] },
  { name = "g:parents", topic = "structure",
    sig = "g:parents(v)",
    brief = "Nodes with an arrow into v (or into any of a list)",
    returns = "list of names, sorted",
    summary = "Nodes with an arrow into v (for a list of nodes, into any of them).",
    example = [[g:parents "yield"]] },
  { name = "g:children", topic = "structure",
    sig = "g:children(v)",
    brief = "Nodes v has an arrow into (for a list, the union)",
    returns = "list of names, sorted",
    summary = "Nodes v has an arrow into (for a list of nodes, the union).",
    example = [[g:children "rain"]] },
  { name = "g:ancestors", topic = "structure",
    sig = "g:ancestors(set)",
    returns = "list of names, sorted",
    summary = [[Nodes with a directed path into the node or set. A member of the set appears
only if it is itself an ancestor of another member.]],
    example = [[g:ancestors "yield"]] },
  { name = "g:descendants", topic = "structure",
    sig = "g:descendants(set)",
    returns = "list of names, sorted",
    summary = [[Nodes reached by a directed path from the node or set. A member appears only
if it is itself a descendant of another member.]],
    example = [[g:descendants {"rain", "pests"}]] },
  { name = "g:order", topic = "structure",
    sig = "g:order()",
    returns = "list of names",
    summary = [[A topological order. Every node comes after all its ancestors; it is the
alphabetically first such order, so it is the same on every run.]],
    example = [[g:order()]] },
  { name = "g:trails", topic = "adjust",
    brief = "Every trail between x and y, open or blocked",
    sig = "g:trails(x, y, {given=, limit=})",
    returns = "list of {nodes=, text=, kind=, open=, blocked_at=, why=}",
    summary = [[Every trail between x and y (a path that ignores arrow direction). kind is
"causal" (all arrows point from x toward y), "backdoor" (it starts with an
arrowhead into x) or "noncausal". Given a set, open tells whether the trail
is open; a blocked trail names its first blocking node and why: a
non-collider in the set, or a collider with neither itself nor a descendant
in the set. <-> counts as two arrowheads. limit (a whole number, default
10000) stops the listing with a note; an unknown option is an error.]],
    example = [[g:trails("mulch", "harvest", {given = {"slope"}})]] },
  { name = "g:count_trails", topic = "adjust",
    brief = "Count the trails without listing them",
    sig = "g:count_trails(x, y)",
    returns = "an integer",
    summary = "Count the trails between x and y without listing them. Ctrl-C stops a long count.",
    example = [[g:count_trails("mulch", "harvest")]] },
  { name = "g:separated", topic = "adjust",
    brief = "Are x and y d-separated given the set?",
    sig = "g:separated(x, y, given)",
    returns = "true, or false and an open trail",
    summary = [[Whether x and y are d-separated given the set (m-separated when the graph has
<-> edges), in time linear in the size of the graph. When they are not, an
open trail is returned as a witness.]],
    example = [[g:separated("slope", "rainfall", {"soil moisture"})]] },
  { name = "g:implications", topic = "adjust",
    brief = "The conditional independences the graph implies",
    sig = "g:implications({limit=, basis=})",
    returns = "list of {a =, b =, given = {...}}, with .untestable",
    summary = [[What the graph claims about the data: for every two observed nodes that are
not joined by an edge and that some set of observed nodes m-separates, one
entry a ⊥ b | given with an inclusion-minimal such set (sorted by name):
the later node's measured parents (in g:order()) when they do it, else a
minimal set of the two nodes' measured ancestors. Hidden nodes are never in
a set; <-> counts as a hidden common cause. Pairs not joined by an edge that
no measured set separates (hidden nodes or <-> edges join them) are counted
in .untestable and named by a last line. basis = "local" (graphs without
hidden nodes or <-> edges) lists instead each node against each of its
non-descendants that is not a parent, given its parents (the local Markov
property), printed one node a line. Order: by the later node in g:order(),
then the earlier. limit (a whole number, default 10000) and Ctrl-C stop the
listing, with a note. Passing tests of these does not prove the graph.]],
    example = [=[g = graph [[
  hidden drought
  "soil pH" -> flowers -> "bee visits" -> seeds
  drought -> flowers; drought -> seeds; "soil pH" -> seeds
]]
g:implications()
--> "soil pH" ⊥ "bee visits" | flowers
--> 1 pair is not adjacent but no measured set separates it: the hidden nodes join the two
graph("a -> b -> c -> d"):implications({basis = "local"})   --> c ⊥ a | b / d ⊥ a, b | c]=] },
  { name = "g:admissible", topic = "adjust",
    brief = "Is the set a valid adjustment set? If not, why",
    sig = "g:admissible(x, y, set)",
    returns = "true, or false and a list of reasons",
    summary = [[Whether the set is a valid adjustment set for the total effect of x on y (the
adjustment criterion; it allows hidden common causes). Each reason names a
mediator or a descendant of the causal path (with the path), a hidden node,
or an open non-causal trail and what opened it (a collider in the set).]],
    example = [[g:admissible("mulch", "harvest", {"slope", "soil moisture"})]] },
  { name = "g:backdoor", topic = "adjust",
    brief = "Pearl's back-door criterion, with reasons",
    sig = "g:backdoor(x, y, set)",
    returns = "true, or false and a list of reasons",
    summary = [[Pearl's back-door criterion: no member descends from x, and the set blocks
every trail that starts with an arrowhead into x. Stricter than
g:admissible.]],
    example = [[g:backdoor("mulch", "harvest", {"slope"})]] },
  { name = "g:adjust", topic = "adjust",
    brief = "Every minimal adjustment set",
    sig = "g:adjust(x, y, {forbid=, require=, limit=})",
    returns = "list of sets",
    summary = [[Every minimal adjustment set for the effect of x on y, smallest first. Hidden
nodes are never used; forbid keeps nodes out and require keeps nodes in
(minimal among the sets that hold them); limit (a whole number, default
10000) stops the listing. {} means no adjustment is needed; an empty list
with .none says why no valid set exists.]],
    example = [[g:adjust("mulch", "harvest", {forbid = {"tree age"}})]] },
  { name = "g:optimal", topic = "adjust",
    brief = "The optimal adjustment set O(X, Y)",
    sig = "g:optimal(x, y)",
    returns = "a set, or nil and the reasons",
    summary = [[The optimal adjustment set: among valid sets, the one whose regression
coefficient has the smallest asymptotic variance in every linear model on
the graph. Without hidden nodes it is O(X, Y) = pa(cn) \ forb (Henckel,
Perkovic and Maathuis 2022). With hidden nodes and <-> edges it also takes
the covariates tied to the outcome by a hidden common cause, walked through
<-> edges with their parents (Runge 2021): in "harvest <-> frost" a frost
record sharpens the harvest and is kept. nil and the reasons when none
exists: no outcome descends from the treatment; no valid set (the hidden
parents named first); or a trade-off: a covariate that sharpens the
outcome also informs the treatment along a trail that another valid set
(the reason's .rival) leaves open, so each set wins in some models. The
reason names the covariate (.node), the node tying it to the outcome
(.via) and that trail (.trail).]],
    example = [=[g = graph "mulch -> harvest; harvest <-> frost"
g:optimal("mulch", "harvest")    --> {frost}
graph("shade -> mulch; shade -> frost; frost <-> harvest; mulch -> harvest"):optimal("mulch", "harvest")
--> nil: 'shade' sharpens the outcome ... rival {}]=] },
  { name = "g:cheapest", topic = "adjust",
    brief = "The adjustment set of least total cost",
    sig = "g:cheapest(x, y, costs)",
    returns = "a set and its total cost, or nil and why",
    summary = [[The adjustment set of least total cost, by a minimum cut; costs is a table of
node = cost (a number from 0 to 1e15; default 1 each, so the smallest
set). Use it when some covariates are expensive or unreliable to measure.]],
    example = [[g:cheapest("mulch", "harvest", {slope = 5})]] },
  { name = "g:frontdoor", topic = "adjust",
    brief = "Front-door sets: routes through fully mediating nodes",
    sig = "g:frontdoor(x, y [, set]) or g:frontdoor(x, y, {limit=})",
    returns = "list of minimal sets; or, given a set, true, or false and a list of reasons",
    summary = [[Pearl's front-door criterion (Causality 2009, definition 3.3.3) for the
effect of one node x on one node y, in graphs with hidden nodes and <-> edges.
A set qualifies when it intercepts every directed path from x to y, no
back-door trail from x to a member is open, and x blocks every back-door
trail from a member to y. With a set: true, or false and every reason (a
directed path the set misses, an open back-door trail from x to a member,
an open back-door trail from a member to y given x; x or y in the set).
Without: every inclusion-minimal front-door set, smallest first, hidden
nodes never used; {} when none exists, with .none saying why ({} as a set
means x has no directed path to y). limit (a whole number, default 10000)
and Ctrl-C stop the listing. x and y are single nodes; a hidden node in the
set is an error. The listing is a search pruned by the largest front-door
set (Jeong, Tian and Bareinboim 2022); its delay between answers is
polynomial unless many non-minimal sets lie between two minimal ones.]],
    example = [[g = graph "fertiliser -> nitrate -> yield; fertiliser <-> yield"
g:frontdoor("fertiliser", "yield")                 --> {nitrate}
g:frontdoor("fertiliser", "yield", {"nitrate"})    --> true]] },
  { name = "g:instruments", topic = "adjust",
    brief = "Conditional instruments for the effect of x on y",
    sig = "g:instruments(x, y [, z, given]) or g:instruments(x, y, {limit=})",
    returns = "list of {z =, given = {...}}; or, for one z, true, or false and a list of reasons",
    summary = [[Conditional instruments (Brito and Pearl 2002; van der Zander, Textor and
Liskiewicz 2015): z is one given the set W when W holds no descendant of y
or of a node on a causal path from x, z and x are d-connected given W, and
z and y are d-separated given W once the arrows from x into its causal
paths are removed (the edge x -> y alone when it is the only one). Without
z: every observed z that is an instrument given some W among the ancestors
of y and z (ancestral instruments), sorted by z, each with an inclusion-
minimal W; a z that needs a W outside those ancestors is not listed, but a
check of it works. With z and given: true, or false and the reasons (W
holds a forbidden descendant, z is d-separated from x, or an open trail
from z to y). x, y and z are single nodes; hidden nodes are errors.]],
    example = [[g = graph "rainfall -> irrigation -> yield; irrigation <-> yield"
g:instruments("irrigation", "yield")               --> rainfall  given {}
g:instruments("irrigation", "yield", "rainfall", {})  --> true]] },
  { name = "g:identify", topic = "adjust",
    brief = "Is the effect identified, and by which formula?",
    sig = "g:identify(x, y, {given=})",
    returns = "r: identified, formula, hedge, why, adjustment, frontdoor; r:latex(); r:evaluate(f, {at=, weights=})",
    summary = [[Whether P(y | do(x)) can be computed from the distribution of the observed
nodes, in any graph with hidden nodes and <-> edges (the complete ID algorithm
of Shpitser and Pearl 2006, on the latent projection; given = z asks for the
conditional effect P(y | do(x), z) by their IDC). r.formula prints it in
probability notation, simplified (sums that add to 1 removed, chain-rule
factors joined), with primes on a variable summed inside a term that also
uses its fixed value: the front-door formula reads
Σ_m P(m | x) Σ_x' P(y | x', m) P(x'). r:latex() gives the same in LaTeX.
When an adjustment set works, r.adjustment holds the smallest one, and
r.frontdoor a front-door set when g:frontdoor finds one; tostring(r) says so.
When the effect is not identified, r.hedge = {f = {...}, f2 = {...}} holds
the two node sets that prove it (a hedge) and r.why says so in one line.
r:evaluate(f, {at = {x = value, ...}, weights = "column"}) plugs the data's
distribution into the formula: a table of P(y = v | do(x = value)) for every
value v of y (given = z needs a value for z in at as well). Every variable of
the formula must be a categorical or whole-number column with no missing
value; weights are frequency weights (finite, non-negative): a frame of
every cell once, weighted by its probability, gives the exact effect. An
empty stratum the formula needs is an error that names it. The formula is
only as good as the graph behind it.]],
    example = [=[g = graph [[
  hidden "farm practice"
  "farm practice" -> irrigation; "farm practice" -> yield
  irrigation -> "soil nitrate" -> yield
]]
r = g:identify("irrigation", "yield")
print(r, r:latex())
plots = read_csv "plots.csv"       -- irrigation, "soil nitrate", yield: 0/1
r:evaluate(plots, {at = {irrigation = 1}})]=] },
  { name = "g:test", topic = "adjust",
    brief = "Put the graph on trial: test its implications",
    sig = "g:test(f, {method=, alpha=, adjust=, level=, boot=, seed=, plot=, implications=})",
    returns = "a table, one row per implication: a, b, given, test, n, dropped, effect, lo, hi, stat, df, p, p_adj, verdict, why, add; fields alpha, adjust, untestable, in_database (a lazy table)",
    summary = [[Tests every conditional independence of g:implications() (or the list given
as implications =) on the data frame f, or on a lazy table (connect; see the
end). The test follows the column types:
both continuous: the partial correlation (residuals of least squares on the
given set) with Fisher's z test and interval (SE 1/sqrt(n - k - 3), k the
conditioning columns, text columns as dummies); a binary (0/1 or two-level)
or text column: the likelihood-ratio test of nested regressions, logistic for
a binary response, linear (Gaussian likelihood) for a continuous one, the
other column added as the last term (a text column of more levels is only
ever the regressor); every column discrete and at most 512 cells with 5 rows
each on average: the G-test summed over the strata of the given set, each
stratum giving (r - 1)(c - 1) degrees of freedom over its non-empty rows and
columns. A numeric column is continuous unless it holds only 0 and 1. method
= "partial", "lr", "gtest" forces one; "residual" is Spearman's correlation
of the two residuals, a rank test that does not assume straight lines. The
effect is a correlation: the partial correlation, or for the LR and G tests
sqrt(1 - exp(-stat / n)) (signed when df = 1); intervals where the theory
gives one (partial and rank correlations, the linear LR with df = 1), or
boot = B percentile intervals for all (seed = for the same bits). Rows with a
missing value are dropped per implication (dropped counts them). p_adj:
adjust = "holm" (default), "bh" (Benjamini-Hochberg) or "none"; verdict is
"contradicted" when p_adj < alpha (0.05), else "consistent", or "not tested"
with why (a column missing from f, a constant column, too few rows). For a
contradicted one, add lists the edges (a -> b, b -> a, a <-> b) that keep
the graph acyclic and would remove it. The printout shows the table, the
summary, a text picture of the effects and the caution; plot = "file.svg"
(.png, .pdf) draws them sorted with a zero line, contradicted ones marked.
Passing does not prove the graph: hidden confounders and the direction of
edges stay untested.
f = a lazy table tests inside the database: per implication one query for
the columns' means and kinds over the complete rows and one for their
centred cross-products, from which the partial correlation (and method =
"lr" with a continuous response) comes as it does for a frame; the rows
stay there. Numeric columns only. method = "residual" and "gtest" and boot
= are refused (they need the rows: fetch them with t:fetch()); an
implication whose columns would get the G-test or the logistic LR test, or
that has a text column, is "not tested" with why saying so (method =
"partial" runs 0/1 columns in the database).]],
    example = [=[g = graph [[
  "home support" -> attendance -> grade
  "home support" -> homework -> grade
  distance -> attendance
]]
pupils = read_csv "pupils.csv"
t = g:test(pupils)                  -- Holm-adjusted, alpha = 0.05
t[1].verdict, t[1].p_adj, t[1].add
g:test(pupils, {method = "residual", adjust = "bh", plot = "trial.svg"})
g:test(connect("school.db"):table("pupils"))   -- inside the database]=] },
  { name = "ols", topic = "estimate",
    sig = "ols{data=, y=, x={...}, se=, cluster=, weights=, level=}",
    brief = "Least squares regression",
    returns = "a fitted model: coef, se, p, lo, hi, se_method, n, r2, :predict(f)",
    summary = [[Ordinary least squares through a streamed Householder QR (accurate to the
NIST StRD certified values). An intercept is added; a text column enters
as dummies for every level but the first. Rows with a missing value are
dropped (n and dropped say how many). Collinear columns are an error that
names them.
se = "classical" (default), "HC0" (White), "HC1" (HC0 times n/(n-p)),
"HC3" (each residual over 1 - its leverage; the safest for small n) or
"cluster" with cluster = "column" (Liang-Zeger, times G/(G-1) (n-1)/(n-p)
as statsmodels; cluster = alone implies it; fewer than 30 clusters is a
warning, one an error). The chosen SE gives se, t, p and the intervals lo,
hi at level (default 0.95): t with n - p degrees of freedom, G - 1 for
clusters. se_method names it; se_classical and robust_se (HC3) stay.
weights = "column" fits weighted least squares, minimizing sum w e^2. The
classical SE takes them as frequency weights (row i stands for w_i rows:
sigma^2 = sum w e^2 / (sum w - p), df sum w - p); the robust and cluster
SEs as sampling weights (scores w_i e_i x_i, n the rows of positive
weight): for survey or inverse-probability weights use se = "HC1" or a
cluster. A missing, negative or infinite weight, or all weights 0, is an
error naming the row. weight_sum and ess (Kish: (sum w)^2 / sum w^2) are
printed.
data = a lazy table (connect) fits inside the database: one query for the
means, one for the cross-products centred at them, solved in sluice; the
rows stay there. Numeric columns only; se = "classical", "HC0" or "HC1"
(one more query), robust_se the chosen HC0/HC1 (NaN when classical);
HC3, cluster = and weights = are refused (fetch the rows for them).]],
    example = [[m = ols{data = plots, y = "harvest", x = {"mulch", "slope"}}
m.coef.mulch, m.lo.mulch, m.hi.mulch
ols{data = plots, y = "harvest", x = {"mulch"}, se = "HC3"}
ols{data = plots, y = "harvest", x = {"mulch"}, cluster = "farm", weights = "area"}
ols{data = connect("farm.db"):table("plots"), y = "harvest", x = {"mulch"}, se = "HC1"}]] },
  { name = "logit", topic = "estimate",
    sig = "logit{data=, y=, x={...}, se=, cluster=, weights=, level=}",
    brief = "Logistic regression, with odds ratios",
    returns = "a fitted model: coef, se, p, lo, hi, odds_ratio, or_lo, or_hi, loglik, :predict(f)",
    summary = [[Logistic regression by iteratively reweighted least squares, for a 0/1
response. The result says whether it converged; separation (a column that
predicts the response perfectly) is a warning that names the column.
:predict(f) gives probabilities. Beside each coefficient: its odds ratio
exp(coef) and interval exp(lo), exp(hi) (odds_ratio, or_lo, or_hi).
se = "classical" (default: the inverse information), "HC0", "HC1" (times
n/(n-p)), "HC3" (leverages of the weighted working design) or "cluster"
with cluster = "column", as for ols; p and intervals from the normal at
level (default 0.95). robust_se (HC0) stays. statsmodels 0.13 gives its
HC0 for HC1 and HC3 of a logit; sluice follows the usual GLM definitions.
weights = "column": the weighted likelihood; the classical SE is the same
for frequency and sampling weights, the robust and cluster SEs use scores
w_i (y_i - mu_i) x_i (sampling weights). Bad weights are errors as in
ols.
data = a lazy table (connect) fits inside the database: one aggregate
query per iteration (the probabilities computed in SQL), the rows stay
there. Numeric columns only; se = "classical", "HC0" or "HC1"; HC3,
cluster = and weights = are refused (fetch the rows for them).]],
    example = [[m = logit{data = pupils, y = "passed", x = {"tutoring", "attendance"}}
m.odds_ratio.tutoring, m.or_lo.tutoring, m.or_hi.tutoring
logit{data = pupils, y = "passed", x = {"tutoring"}, cluster = "school"}
logit{data = connect("school.db"):table("pupils"), y = "passed", x = {"tutoring"}}]] },
  { name = "estimate", topic = "estimate",
    sig = "estimate{data=, treatment=, outcome=, set= | graph=, method=, se=, weights=, cluster=, boot=, interval=}",
    brief = "The average effect of a treatment",
    returns = "{estimate=, se=, lo=, hi=, n=, method=, set=, warnings=, ...}",
    summary = [[The average causal effect of treatment on outcome, adjusted for set (or for
the optimal set of graph, which is printed with the reason; when the graph
has no optimal set, the smallest minimal set and why). method:
"standardize" (the g-formula, default: outcome model with treatment-by-
covariate interactions, linear or logistic), "ipw" (normalised weights;
stabilized = true, truncate = {1, 99}; printed with the effective sample
size (sum w)^2 / sum w^2 over all rows and within each group, which need
not add up to the overall one) or "aipw" (doubly robust). estimand "ATE",
"ATT" or "ATC"; scale "difference", "ratio" (of means, which must both be
positive) or "odds ratio"; contrast = d (finite, not 0) for a continuous
treatment. A treatment with two values is binary however coded (1/2,
"yes"/"no", text): the larger number, or the level reading yes/true/
treated, or else the later level, is taken as treated and printed;
treated = picks it. A numeric treatment with 3 to 5 values is estimated as
continuous with a warning.
Uncertainty comes without asking: an analytic SE from the estimating
equations of the working model and the two means, stacked (the M-estimation
sandwich, Stefanski and Boos 2002): for standardization with its outcome
model, for IPW with its propensity model (Lunceford and Davidian 2004;
se = "ps known" treats the propensities as known, conservative for the ATE
only), for AIPW from the two means' influence functions. A ratio's or odds
ratio's SE is of its logarithm and its interval exp(log estimate +- z SE).
cluster = "column": sums within clusters first (Liang and Zeger 1986), a
warning below 30 clusters, and a bootstrap that draws whole clusters.
weights = "column": sampling weights (each row stands for w units of the
population sampled): every working model and mean is weighted, the SE is
the sandwich of the weighted equations, the bootstrap keeps each drawn
row's weight, and Kish's effective sample size is printed. A weight must
be a finite number at least 0 in every complete row, not all 0. A whole-
number weight gives the point estimate of its row repeated; for frequency
weights the sandwich SE is then conservative.
boot = B adds a bootstrap (seed = a whole number; identical for a seed
whatever the number of threads): its SE, the percentile interval and, with
B >= 1000, BCa (Efron 1987; acceleration from the influence values).
interval = "normal" | "percentile" | "bca" picks the one in lo, hi (default:
percentile with boot =, normal without). Prefer the analytic interval for
speed and with large n; BCa when the estimate's distribution is skewed
(ratios, small n, rare outcomes): it corrects the percentile interval's
bias and skew and is second-order accurate. level strictly between 0 and 1,
default 0.95. When graph
admits no adjustment set, the error says so and names the routes it has
(front-door set, instrument, or the general formula of g:identify) with the
call to use.
method = "frontdoor", via = {mediators} (earliest first; a 0/1 treatment;
no set): the front-door formula E[Y | do(x)] = sum_m P(m | x) sum_x' P(x')
E[Y | x', m]. Each mediator is regressed on the treatment and the earlier
mediators (linear, or logistic when 0/1), the outcome on the treatment and
the mediators (linear or logistic; interactions = true adds treatment-by-
mediator terms). Assumed: a continuous mediator is its model's mean plus an
error whose distribution does not depend on the treatment (its values
under x are the fitted mean plus each row's residual); a 0/1 mediator is
summed over. With every model linear the estimate is the product of
coefficients, with a delta-method SE (Sobel 1982); otherwise boot =.
method = "iv", instrument = z (or a list), set = covariates: two-stage
least squares. SE: HC1 robust (classical and HC0 printed beside); the
first-stage F of the instruments (below 10 a weak-instrument warning,
Staiger and Stock 1997); the Wald ratio for one 0/1 instrument, a 0/1
treatment and no set. When effects differ between people, the IV estimate
is a local effect for compliers (Imbens and Angrist 1994), not the effect
in everyone. With graph =, the smallest front-door set, or the instrument
with the smallest conditioning set (the first listed), is used and named;
given via = or instrument = are checked against the graph.
data = a lazy table (connect) runs standardize, ipw and aipw inside the
database: the same estimator, its working models fitted from aggregate
queries (least squares from centred cross-products, logistic regression by
Newton steps), its means and analytic SE as sums over the rows; only a few
numbers per query come back, whatever the number of rows. Equal to the
estimate of the fetched rows to about 1e-9. Text covariates become dummies
(at most 100 levels), weights = and cluster = work; truncate = and the
front-door and IV routes need the fetched rows. boot = there is the
Poisson bootstrap (Hanley and MacGibbon 2006): each row is weighted in
replicate r by a Poisson(1) draw from its key, the seed and r, computed in
SQL (the same on SQLite and PostgreSQL), 50 replicates per query; name the
rows' key, a column of whole numbers, with db:table(name, {key = "id"}).
An estimate is only as good as the graph and the assumptions behind it
(no unmeasured confounding for adjustment; the front-door or instrument
conditions for those routes); it is no substitute for qualified
epidemiological or clinical judgement.]],
    example = [[estimate{data = plots, treatment = "mulch", outcome = "harvest",
         graph = g, method = "aipw", boot = 500, seed = 7}
-- clinics: a hidden frailty drives both the checklist and recovery; the
-- checklist acts only through hand hygiene (a front-door route), and the
-- reminder letter moves screening uptake alone (an instrument)
estimate{data = wards, treatment = "checklist", outcome = "recovery",
         method = "frontdoor", via = {"hygiene"}}
estimate{data = wards, treatment = "screened", outcome = "stage",
         method = "iv", instrument = "letter", set = {"age"}}]] },
  { name = "balance", topic = "estimate",
    sig = "balance{data=, treatment=, set= | graph=, [outcome=]}",
    brief = "Covariate balance before and after weighting",
    returns = "a table of standardized mean differences (each covariate: before, after; treated_mean, control_mean, treated_var, control_var, and the same ending in _after); fields n, dropped",
    summary = [[The standardized mean difference of each covariate between treated and
control, before and after inverse probability weighting: the difference of
the groups' weighted means over the root of the mean of their weighted
variances (Austin 2009). With graph = the
covariates are the graph's adjustment set for outcome = when it is given,
otherwise the treatment's parents (an error when one is hidden or shares a
hidden common cause with it). A text covariate gives a row for each level
but the first. |SMD| > 0.1 is
flagged (common practice; Austin 2009). A covariate that is the treatment,
or that takes one value among the treated and another among the controls,
is an error: its SMD is not defined. weights = "column" (sampling weights,
as in estimate{}): "before" is weighted by them, "after" by them times the
inverse probability weights; treated = as in estimate{}.
data = a lazy table (connect) computes inside the database: the propensity
model as estimate{} fits it there, then each covariate's sums by group in
a few aggregate queries; equal to the fetched rows' to about 1e-9.
truncate = needs the fetched rows.]],
    example = [[balance{data = plots, treatment = "mulch", set = {"slope", "tree age"}}]] },
  { name = "overlap", topic = "estimate",
    sig = "overlap{data=, treatment=, set= | graph=, [outcome=], [bins=], [plot=]}",
    brief = "Propensity overlap between the groups",
    returns = "a summary by group (groups: n, min, q1, median, q3, max), with a text histogram (hist: treated and control rows of each bin); fields n, dropped, extreme",
    summary = [[Fitted propensities of treatment by group: quartiles, a text histogram of
bins = 20 bins (1 to 1000) from 0 to 1, and with plot = "file.svg" (or
.png, .pdf) a picture. Propensities outside [0.01, 0.99] are counted and
warned about (common practice). A propensity less than 1e-12 of itself
below a bin's edge or 0.01, or above 0.99, counts as on it: a model of
text covariates can put one there exactly (1/2, 3/4). graph = chooses
the covariates as in balance{}: the adjustment set for outcome = when
given, otherwise the treatment's parents. weights = "column" fits the
propensity model with the rows' sampling weights (the counts are of rows).
data = a lazy table (connect) computes inside the database: the propensity
model as estimate{} fits it there, the counts and extremes in one aggregate
query, and each quartile exactly from a few rounds of counting the rows
below chosen values (a pass over the rows each); equal to the fetched
rows' to about 1e-9.]],
    example = [[overlap{data = plots, treatment = "mulch", set = {"slope"}, plot = "overlap.svg"}]] },
  { name = "evalue", topic = "estimate",
    sig = "evalue(r, {sd=, data=, rare=}) or evalue{rr= | or_= | hr= | d= | diff=, sd=, lo=, hi=, rare=}",
    brief = "How strong an unmeasured confounder must be (E-value)",
    returns = "a table {point=, limit=, rr=, ...} that prints a plain reading",
    summary = [[The E-value of VanderWeele and Ding (2017, Ann Intern Med): the least risk
ratio that an unmeasured confounder would need with both the treatment and
the outcome, above and beyond the measured covariates, to explain away the
estimate: E = RR + sqrt(RR (RR - 1)), of 1/RR when RR < 1. limit is the
E-value of the confidence limit closest to 1 (1 when the interval already
holds 1). Other measures are first turned into an approximate risk ratio:
an odds ratio (or_ = or ["or"] =) or hazard ratio (hr =) needs rare = true
(outcome under about 15% by the end of follow-up: taken as the RR) or
false (common: sqrt(OR); (1 - 0.5^sqrt(HR)) / (1 - 0.5^sqrt(1/HR))); a
standardized mean difference d = (or diff = with sd =, the outcome's SD)
through RR ~ exp(0.91 d). evalue(r) takes an estimate{} result: its scale
says which (an odds ratio picks rare = from the estimated risks unless
given; a difference in means needs sd = or data = for the outcome's SD; a
risk difference is refused: estimate on scale = "ratio"). A ratio <= 0,
lo above hi, or an estimate outside its interval is an error. The E-value
says how strong confounding would have to be, not whether it exists; it is
no substitute for qualified epidemiological or clinical judgement.]],
    example = [[evalue{rr = 3.9, lo = 1.8, hi = 8.7}        -- 7.26, and 3.00 for the lower limit
-- a screening programme, read from a published table (invented here)
evalue{["or"] = 1.9, lo = 1.3, hi = 2.8, rare = false}
r = estimate{data = wards, treatment = "screened", outcome = "readmitted", set = {"age"}, scale = "ratio"}
evalue(r)]] },
  { name = "sensitivity", topic = "estimate",
    sig = "sensitivity{data=, treatment=, outcome=, set=, benchmark=, k=, q=, alpha=, plot=}",
    brief = "How an unmeasured confounder would move the estimate",
    returns = "a table {estimate=, se=, t=, df=, partial_r2=, rv=, rv_alpha=, bounds=, ...}",
    summary = [[Omitted-variable bias of the least-squares coefficient of the treatment in
outcome ~ treatment + set, in the partial R^2 terms of Cinelli and Hazlett
(2020, JRSS-B). partial_r2 is the share of the outcome's residual variance
the treatment explains (t^2 / (t^2 + df)); rv, the robustness value, the
least share of the residual variance of both treatment and outcome that a
confounder must explain to move the estimate by q times itself (q = 1: to
zero); rv_alpha the least that makes the 1 - alpha interval reach that
value. benchmark = names covariates of the set: bounds has one row per
benchmark and k (default k = {1, 2, 3}) for a confounder k times as strong
as it, with the implied partial R^2 of the confounder with the treatment
and with the outcome, and the adjusted estimate, SE, t and interval.
plot = "file.svg" (or .png, .pdf) draws the adjusted estimate as contours
over the two partial R^2 values, the zero line dashed red and the bounds
marked. sensitivity{estimate=, se=, df=} works from a published
regression (no benchmarks). The treatment and outcome must be numeric; a
benchmark that is the treatment, the outcome or not in the set is an
error; rows with a missing value are dropped. It says how strong a
confounder would have to be, not whether one exists: no substitute for
qualified epidemiological or clinical judgement.]],
    example = [[sensitivity{data = wards, treatment = "nurse hours", outcome = "stay", set = {"age", "severity"},
            benchmark = "severity", plot = "stay.svg"}
sensitivity{estimate = 0.42, se = 0.11, df = 640}]] },
  { name = "sem", topic = "model",
    sig = "sem(g, coefs, opts)",
    brief = "A linear structural model on a graph",
    returns = "a model m",
    summary = [[A linear structural equation model on graph g: coefs gives each arrow's
coefficient, keyed as in the notation (["rain -> soil"] = 0.5; opts.default
fills the rest). opts: intercept = {node = value}, sd = {node = value} (the
noise SD, default 1), cov = {["a <-> b"] = value} for each <-> edge (the
error covariance must be positive definite), binarize = {node = cut},
binary = {node, ...} (a logistic link). Every value must be a finite
number, and an unknown option is an error. Hidden nodes take part in the
model and are left out of simulated data.]],
    example = [=[m = sem(g, {["mulch -> harvest"] = 1.5}, {default = 0.4, sd = {harvest = 2}})]=] },
  { name = "m:effect", topic = "model",
    sig = "m:effect(x, y, {draws=, seed=})",
    brief = "The true total effect of x on y",
    returns = "a number (or a Monte Carlo value and its SE)",
    summary = [[The total effect [(I - B)^-1]_yx: the sum over directed paths of the products
of their coefficients. With binary or binarized nodes the closed form does
not hold: give draws = N for a Monte Carlo value (setting x to 1 versus 0,
or adding 1) with its standard error.]],
    example = [[m:effect("mulch", "harvest")]] },
  { name = "m:cov", topic = "model",
    sig = "m:cov()",
    brief = "The implied covariance of the observed nodes",
    returns = "a table keyed by node names (with .names in order)",
    summary = "The covariance matrix (I - B)^-1 Omega (I - B)^-T restricted to the observed nodes.",
    example = [[m:cov().harvest.mulch]] },
  { name = "m:limit", topic = "model",
    sig = "m:limit(x, y, set, {draws=})",
    brief = "What a set's regression coefficient converges to",
    returns = "a number (or a Monte Carlo value and its SE)",
    summary = [[The value the least-squares coefficient of x in a regression of y on x and the
set converges to, computed exactly from the implied covariance: the
large-sample bias of each adjustment set, with no sampling at all.]],
    example = [[m:limit("mulch", "harvest", {"slope"})]] },
  { name = "m:simulate", topic = "model",
    sig = "m:simulate(n, {seed=, binarize=, threads=})",
    brief = "Simulated data from the model",
    returns = "a data frame of the observed nodes",
    summary = [[n rows (a whole number from 1 to 10^9) drawn with GSL's generators,
identical for a seed on any machine and any number of threads (threads =
0 uses every core). binarize = {node = cut} (a finite cut) turns the node
into 1 above the cut and 0 otherwise before its children see it, in this
draw only: m itself is unchanged. For the truth about binarized data
(m:effect, m:limit with draws =, compare{truth =}) build the model with
sem(g, coefs, {binarize = {node = cut}}), which draws the same data.]],
    example = [[d = m:simulate(10000, {seed = 42, binarize = {mulch = 0}})]] },
  { name = "m:graph", topic = "model",
    sig = "m:graph()",
    brief = "The graph of the model",
    returns = "a graph",
    summary = "The graph the model was built on.",
    example = [[m:graph():show()]] },
  { name = "m:exact", topic = "model",
    sig = "m:exact()",
    brief = "Whether the closed forms hold",
    returns = "a boolean",
    summary = "False once the model has binary or binarized nodes.",
    example = [[m:exact()]] },
  { name = "compare", topic = "model",
    sig = "compare{data=, graph=, treatment=, outcome=, truth=, sets=, method=, routes=, hidden=, plot=, draws=}",
    brief = "Each candidate set's estimate beside the truth",
    returns = "a table, printed with a forest plot",
    summary = [[The estimate under each candidate adjustment set: no adjustment, all observed
covariates, every minimal set, the optimal set, and the sets you add. For
each: whether the graph deems it valid (with the reason when not), the
estimate and its interval (method as in estimate{}, its analytic SE unless
boot = is given; weights = as in estimate{}), the error in percent of the truth (a finite number, or a
model from sem(); printed to one decimal, exact in the row's error_pct), and for a linear model m:limit. The
heading says how the truth was had: a model with binary or binarized nodes
gives it by Monte Carlo (draws = 200000 unless given, seeded by seed =)
with its SE, or "exact" when the effect is the same in every simulated
unit (a binary treatment of a linear outcome). sets = "z" adds one
set; sets = {"z", {"z", "w"}} adds a set per item. routes = true adds a
row for the graph's front-door set (estimate{method = "frontdoor"}) and
one for its instrument (method = "iv"), each with its own interval (the
bootstrap when it has no analytic SE); they are added by default when the
graph admits no adjustment set, and routes = false leaves them out. A
route the data cannot take (e.g. a treatment not 0/1 for the front-door)
is left out with a note. plot = "file.svg" draws the forest plot with the
truth as a reference line. Set labels are never cut: in the text forest
and the picture a long one breaks between names onto more lines, and the
picture widens to fit. For teaching, hidden = "u" (with truth = a
linear model whose graph has the hidden node u) rebuilds the model with
u's coefficients times 0, 0.5, 1, 1.5 and 2 and shows, in a table under the
comparison, the truth and the value each adjustment set converges to
(m:limit) as the hidden confounder grows; with plot = "a.svg" a second
picture, a-hidden.svg, draws a line per set.]],
    example = [[compare{data = d, truth = m, treatment = "mulch", outcome = "harvest", plot = "sets.svg"}
-- every route against the truth of a simulated clinic model
m = sem(graph "hidden frailty; frailty -> checklist, recovery; checklist -> hygiene -> recovery",
        {["checklist -> hygiene"] = 0.9, ["hygiene -> recovery"] = 0.7},
        {default = 0.8, binarize = {checklist = 0}})
d = m:simulate(20000, {seed = 3})
compare{data = d, truth = m, treatment = "checklist", outcome = "recovery", boot = 0}
-- how each set drifts as a hidden frailty grows
m2 = sem(graph "hidden frailty; frailty -> rehab, stay; age -> rehab, stay; rehab -> stay", {}, {default = 0.6})
compare{data = m2:simulate(5000, {seed = 1}), truth = m2, treatment = "rehab", outcome = "stay", boot = 0, hidden = "frailty"}]] },
  { name = "g:show", topic = "picture",
    sig = "g:show()",
    returns = "text",
    summary = [[A text view for the terminal. One line per node in causal order (by causal
depth, the longest path from a root, then by name) with its causal
depth, its parents (<-) and its hidden-cause partners (<->).]],
    example = [[g:show()]] },
  { name = "g:dot", topic = "picture",
    sig = "g:dot()",
    returns = "DOT text",
    summary = [[The graph in DOT, the Graphviz language. Hidden nodes and their arrows are
dashed; <-> edges are dashed with two heads.]],
    example = [[io.open("orchard.dot", "w"):write(g:dot())]] },
  { name = "g:draw", topic = "picture",
    sig = "g:draw(path)",
    returns = "path",
    summary = [[Write a picture of the graph. Graphviz lays it out; the format follows the
extension: .svg, .png or .pdf.]],
    example = [[g:draw "orchard.svg"]] },
  { name = "help", topic = "session",
    sig = "help([name] | {pager=})",
    brief = "Describe the functions",
    returns = "nothing; prints",
    summary = [[Describe the functions. Without a name, every function by topic, one line
each; with one, its signature, result and an example. At the prompt, on a
terminal, the list by topic goes through the pager ($PAGER, else less -R;
PAGER=cat or an empty PAGER for none); help{pager = false} prints it
instead. A script, a log run as a script and a replay always print it.]],
    example = [[help "g:parents"]] },
  { name = "version", topic = "session",
    sig = "version",
    returns = "a string",
    summary = "The version of sluice.",
    example = [[print(version)]] },
  { name = "log", topic = "session",
    sig = "log([path | false])",
    brief = "The session log: where it is, starting, stopping",
    returns = "the path of the session log, or nil",
    summary = [[The session log: a Lua script of every input, what it printed (as "--| "
lines) and the data files read (path, size, SHA-256, as "--@ " lines), each
entry flushed to disk before the next prompt. The interactive shell logs to a
new file in ./sluice-logs unless started with --no-log or --log PATH.
log(path) starts a new log at path, log(false) stops logging, log() gives the
current path. sluice --replay LOG re-runs a log and compares every output.
A log is code: a replay runs it in a child process that the kernel confines
(Landlock: writes only beneath --out; seccomp: no programs, processes or
sockets; limits on memory, CPU and --limit seconds per entry), while the
parent writes the report. In a replay with --out DIR, log(path) with a
relative path starts that log in DIR, and log() gives the replayed log's path:
the line it prints is volatile ("--@ volatile K"), shown but not compared.
A script keeps the same log: sluice --log LOG script.lua writes each top-level
statement as an entry (the -e code too). Top-level locals live from one input
or statement to the next. sluice LOG runs a log as a script, entry by entry:
an error the log recorded is shown and the run goes on, one it did not record
stops it (status 1, LOG:LINE). It has no sandbox: only for your own logs.]],
    example = [[log "orchard-session.lua"]] },
  { name = "show", topic = "session",
    sig = "show(...)",
    returns = "nothing; prints",
    summary = [[Print values the way the prompt prints an expression. The session log writes
an expression typed at the prompt as show(expression), so that the log runs as
a script and prints what the prompt printed.]],
    example = [[show(graph "rain -> yield")]] },
  { name = "report", topic = "session",
    sig = "report(path)",
    brief = "Write the session as a Markdown or HTML report",
    returns = "path",
    summary = [[Write the session so far as a Markdown report: the metadata (version, start,
log, data files with their SHA-256), each command (in a script, each top-level
statement) in a code block with its output (up to 2000 lines of each), the
pictures commands drew (g:draw, plot =) as images, and the caution. A path
ending in .html gives a self-contained page (CommonMark through libcmark,
pictures inlined). In a replay with --out DIR a relative path lands in DIR, as
do those of g:draw, f:write_csv, plot = and exercise{dir=}; a path that leaves
DIR is blocked.]],
    example = [[report "orchard-report.html"]] },
  { name = "exercise", topic = "session",
    sig = "exercise{graph=, model=, dir=, treatment=, outcome=, n=, seed=, scenario=, sets=, questions=, digits=, draws=}",
    brief = "A teaching kit: data, graph, handout and answer key",
    returns = "a table of the files written",
    summary = [[For teaching: writes into the folder dir data.csv, n rows (default 200)
simulated from the model with the seed (m:simulate) and rounded to digits
significant digits (default 4), graph.svg, handout.md (the scenario, the
graph, the candidate adjustment sets and the questions, each naming the
sluice calls that answer it, with no answers) and key.md (the answers,
computed from data.csv as the students have it: the true effect, exact or
by Monte Carlo with draws draws (default 200000) and its SE for binary or
binarized nodes; the minimal and optimal sets, or why there is none; each
candidate set's estimate and interval, and the reasons an invalid set
fails; the comparison table). sets = adds candidate sets as in compare{}
(e.g. sets = {"m"} for the middle of an M-structure). questions = picks
the parts, in this order: "trails", "valid", "estimate", "choose", "test"
(g:test of the graph's implications); the default is {"valid",
"estimate", "choose"}. treatment and outcome default to the graph's first
and last nodes in causal order. The same seed gives the same files.
Everything is computed before anything is written; the kit is written
into a temporary folder beside dir and then moved into place, so an
error leaves no part of a kit. A dir that exists must be empty, hold an
earlier kit (whose four files are replaced) or hold none of the kit's
file names; other files in it are left alone. An unknown argument or
part is an error naming the closest.]],
    example = [=[exercise{graph = g, model = m, treatment = "mulch", outcome = "harvest",
         n = 300, seed = 4, dir = "kit", questions = {"valid", "estimate"}}]=] },
  { name = "connect", topic = "data",
    sig = "connect(target); db:table(name, {key=}), db:query(sql, {key=}), db:close()",
    brief = "Connect to a database and read its tables lazily",
    returns = "a connection; its tables and queries as lazy tables",
    summary = [[target is an SQLite file (read through the SQLite built into sluice) or a
PostgreSQL URI, postgresql://user@host:port/dbname, as libpq takes it (a
socket folder as ?host=/path). db:table(name) takes the exact name of a
table or view, whatever characters it holds (an unknown name suggests the
closest); db:query(sql) takes one SELECT. Each gives a lazy table t that
knows its columns and their types but holds no rows: t:names(),
t:types() ({column = "number" or "category"}), #t (counted by the
database), t:summary() (as f:summary(), computed by queries), t:head(n)
(the first n rows, 6 unless given, as a frame) and t:fetch{limit=} (every
row as a frame; more than 1000000 rows is refused unless limit is raised,
math.huge for none). Whole numbers, reals and booleans are numbers; texts
and other types categories; NULL is missing. sluice only reads: an SQLite
file is opened read-only, and every PostgreSQL query runs in a read-only
transaction that is rolled back. Names are quoted and values bound, never
pasted into SQL. tostring(db) names the engine, file or database and user,
never a password. db:close() ends the connection; its tables then say so.
Errors relay the engine's own message on one line. Ctrl-C cancels a
query. ols{}, logit{}, estimate{}, compare{}, balance{}, overlap{} and
g:test() take a lazy table as data = and compute inside the database from
aggregate queries. key = names
the rows' key (a column of whole numbers, one per row), from which
estimate{boot =} draws each row's Poisson weights.]],
    example = [[db = connect "survey.db"      -- or "postgresql:///survey?host=/run/postgresql"
trees = db:table "trees"
#trees; trees:summary(); f = trees:fetch()]] },
}

-- The entries of the data frame functions live beside their binding.
for _, e in ipairs(require "sluice.help_data") do H.entries[#H.entries + 1] = e end

local by_name = {}
for _, e in ipairs(H.entries) do
  by_name[e.name] = e
  local short = e.name:match("^[gfcm]:(.+)$")
  if short then by_name[short] = by_name[short] or e end
end
-- the methods of an identification result are told in g:identify's entry
for _, k in ipairs({"r:evaluate", "evaluate", "r:latex", "latex"}) do
  by_name[k] = by_name[k] or by_name["g:identify"]
end
-- the methods of a connection and of a lazy table are told in connect's
for _, k in ipairs({"db:table", "db:query", "db:close", "t:names", "t:types", "t:summary",
                    "t:head", "t:fetch"}) do
  by_name[k] = by_name[k] or by_name["connect"]
end

-- Edit distance, for suggestions.
local function distance(a, b)
  local prev = {}
  for j = 0, #b do prev[j] = j end
  for i = 1, #a do
    local cur = {[0] = i}
    for j = 1, #b do
      local cost = a:sub(i, i) == b:sub(j, j) and 0 or 1
      cur[j] = math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost)
    end
    prev = cur
  end
  return prev[#b]
end

function H.closest(word)
  local best, bestd
  for name in pairs(by_name) do
    local d = distance(word, name)
    if d <= math.max(1, #word // 3) and (not bestd or d < bestd or (d == bestd and name < best)) then
      best, bestd = name, d
    end
  end
  return best
end

function H.lookup(name) return by_name[name] end

-- The text of one entry.
function H.entry_text(e)
  return string.format("%s\n  returns: %s\n\n%s\n\nexample:\n  %s",
                       e.sig, e.returns, e.summary, (e.example:gsub("\n", "\n  ")))
end

H.width = 80          -- the overview's lines fit a terminal of this width
local SIG_COL = 24    -- the column of signatures in the overview

-- The sentence that stands for e in the overview: its brief, else the
-- first sentence of its summary.
local function brief_of(e)
  return e.brief or (e.summary:gsub("\n", " ") .. " "):match("^(.-)[.;]%s") or e.summary
end

-- The line that lists e in the overview: its signature when short enough,
-- and its brief (a longer signature goes on lines of its own above).
function H.summary_line(e)
  local sig = #e.sig > SIG_COL and "" or e.sig
  return string.format("  %-" .. SIG_COL .. "s %s", sig, brief_of(e))
end

-- A long signature on lines of at most H.width columns, broken after the
-- commas between its arguments, never inside one.
local function signature_lines(sig)
  local parts, out, cur = {}, {}, "  "
  for piece in (sig .. ", "):gmatch("(.-, )") do parts[#parts + 1] = piece end
  parts[#parts] = parts[#parts]:sub(1, -3)
  for _, piece in ipairs(parts) do
    local word = piece:gsub(" $", "")
    if cur:match("%S") and #cur + #word > H.width then
      out[#out + 1] = (cur:gsub("%s+$", ""))
      cur = "    "
    end
    cur = cur .. piece
  end
  out[#out + 1] = (cur:gsub("%s+$", ""))
  return out
end

-- The overview: every function by topic, one line each.
function H.overview()
  local out = {"sluice " .. (H.version or "") .. ": functions by topic " ..
               "(help \"name\" for one of them)"}
  for _, topic in ipairs(H.topics) do
    out[#out + 1] = ""
    out[#out + 1] = topic[2]
    for _, e in ipairs(H.entries) do
      if e.topic == topic[1] then
        if #e.sig > SIG_COL then
          for _, l in ipairs(signature_lines(e.sig)) do out[#out + 1] = l end
        end
        out[#out + 1] = H.summary_line(e)
      end
    end
  end
  out[#out + 1] = ""
  out[#out + 1] = H.caution
  return table.concat(out, "\n")
end

function H.text(name)
  if name == nil then return H.overview() end
  if type(name) ~= "string" then
    error("bad argument #1 to 'help' (string expected, got " .. type(name) .. ")", 3)
  end
  local e = by_name[name] or by_name[(name:gsub("^%w+:", ""))]
  if e then return H.entry_text(e) end
  local near = H.closest(name)
  error(string.format("help: no function named '%s'%s", name,
                      near and ("; did you mean '" .. near .. "'?") or ""), 3)
end

local hooks   -- the hooks table: hooks.page, when the prompt set it up

-- help{pager = false}: the options checked; whether to page.
local function pager_option(o)
  for k in pairs(o) do
    if k ~= "pager" then
      local near = type(k) == "string" and distance(k, "pager") <= 2
      error(string.format("help: unknown option %s%s", type(k) == "string" and
                          ("'" .. k .. "'") or tostring(k),
                          near and "; did you mean 'pager'?" or
                          " (help \"name\" for one function, help{pager = false})"), 3)
    end
  end
  if o.pager ~= nil and type(o.pager) ~= "boolean" then
    error("help: pager = must be true or false, got " .. type(o.pager), 3)
  end
  return o.pager ~= false
end

-- help(), help "name", help{pager = false}.  The overview goes through
-- hooks.page, which only the interactive prompt provides: the shell runs
-- the printing with its output sent to the terminal's pager, so that the
-- session log still records the text.  Elsewhere, or when the hook
-- declines (no terminal), it is printed.
local function help(name)
  local paged = true
  if type(name) == "table" then
    paged = pager_option(name)
    name = nil
  end
  local text = H.text(name)
  if name == nil and paged and hooks and type(hooks.page) == "function" and
     hooks.page(function() print(text) end) then
    return
  end
  print(text)
end

function H.install(M, metas, hk)
  H.version = M.version
  hooks = hk
  M.help = help
end

return H
