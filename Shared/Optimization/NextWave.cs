// Next-wave (infill) runs in batches: expected improvement with the kriging-believer or constant-liar heuristic
// (Ginsbourger, Le Riche & Carraro 2010, "Kriging is well-suited to parallelize optimization", in Computational
// Intelligence in Expensive Optimization Problems), largest predictive variance, or maximin fill. The expected
// improvement of one response is maximised on the log scale (LogEI, Ament et al. 2023, NeurIPS 36): spread points
// and perturbations of the best runs, then a bounded quasi-Newton polish from the ten best distinct ones.
using System.Globalization;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Modeling;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Optimization;

public enum InfillCriterion
{
    /// <summary>Where the expected gain over the best run so far is largest (on one response or on the overall
    /// desirability).</summary>
    ExpectedImprovement,

    /// <summary>Where the surrogates are least sure (global accuracy).</summary>
    Variance,

    /// <summary>As far as possible from every run (space filling).</summary>
    Maximin,
}

/// <summary>How a batch is built from a one-point criterion: each pick is added to the surrogates as if it had been
/// run, with its predicted mean (kriging believer) or with the best value so far (constant liar), before the next.</summary>
public enum BatchHeuristic
{
    KrigingBeliever,
    ConstantLiar,
}

public sealed record NextWaveOptions
{
    /// <summary>q, the runs of the wave (a team runs them in parallel).</summary>
    public int Count { get; init; } = 4;

    public InfillCriterion Criterion { get; init; } = InfillCriterion.ExpectedImprovement;

    /// <summary>The response to improve or learn; null: the overall desirability (expected improvement) or every
    /// response with a goal or limit (variance).</summary>
    public string? Response { get; init; }

    public BatchHeuristic Heuristic { get; init; } = BatchHeuristic.KrigingBeliever;

    public int Seed { get; init; } = 1;

    /// <summary>Spread feasible points scored per pick; null: 300 per factor, between 1,000 and 4,000.</summary>
    public int? Candidates { get; init; }

    /// <summary>Monte Carlo draws of the expected improvement of a desirability.</summary>
    public int Draws { get; init; } = 64;

    public static NextWaveOptions Default { get; } = new();

    internal void Check()
    {
        if (Count < 1) throw new ArgumentException("Ask for at least one run.", nameof(Count));
        if (Candidates is { } c && c < 16) throw new ArgumentException("At least 16 candidate points are needed.", nameof(Candidates));
        if (Draws < 4) throw new ArgumentException("At least 4 draws are needed.", nameof(Draws));
    }
}

/// <summary>A proposed run: coded and natural values, the criterion's value there and why it was chosen.</summary>
public sealed record ProposedRun(
    IReadOnlyList<double> Coded,
    IReadOnlyList<double> Natural,
    IReadOnlyDictionary<string, FactorValue> Factors,
    double Score,
    string Reason);

public sealed record NextWaveResult(IReadOnlyList<ProposedRun> Runs, IReadOnlyList<string> Notes)
{
    /// <summary>The proposed runs as coded rows (runs × factors).</summary>
    public Matrix<double> Coded(int factors) => SearchSpace.ToMatrix([.. Runs.Select(r => r.Coded.ToArray())], factors);
}

public static class NextWave
{
    /// <summary>Points closer than this (coded) to a run or an earlier pick count as the same point.</summary>
    private const double SamePoint = 1e-6;

    /// <summary>Distinct best pool points each pick is polished from. Expected improvement is flat and has many
    /// local maxima in several dimensions: in the Hartmann-6 loop, three starts on EI itself left 61 % of the picks
    /// below half the largest value a 100,000-point search with twenty polished starts finds (31 % below a
    /// hundredth); ten starts on ln EI leave 10 % (4 %).</summary>
    private const int PolishStarts = 10;

    /// <summary>
    /// Proposes the runs of the next wave. Every run satisfies the constraints and has integer and categorical factors
    /// at their own values. For expected improvement and variance each pick maximises the criterion over spread
    /// feasible points and perturbations of the best runs, refined by a quasi-Newton polish; the surrogates are then
    /// conditioned on the pick (<see cref="IConditionableSurrogate"/>) so the next pick goes elsewhere. A surrogate that
    /// cannot be conditioned keeps later picks at least 0.1·√k apart instead.
    /// </summary>
    public static NextWaveResult Propose(FactorSpace space, IReadOnlyList<ResponseObjective> objectives, Matrix<double> codedRuns,
        DesignConstraints? constraints = null, NextWaveOptions? options = null, CancellationToken cancellation = default)
    {
        ObjectiveSet.CheckInputs(space, objectives, codedRuns, requireObjectives: false);
        options ??= NextWaveOptions.Default;
        options.Check();
        constraints ??= DesignConstraints.None;
        var notes = new List<string>();
        var criterion = options.Criterion;
        var named = -1;
        if (options.Response is { } name)
        {
            named = Enumerable.Range(0, objectives.Count).FirstOrDefault(r => string.Equals(objectives[r].Name, name, StringComparison.OrdinalIgnoreCase), -1);
            if (named < 0)
                throw new ArgumentException($"'{name}' is not one of the responses ({string.Join(", ", objectives.Select(o => o.Name))}).", nameof(options));
        }
        if (criterion == InfillCriterion.Maximin || objectives.Count == 0) return Maximin(space, codedRuns, constraints, options, notes);
        if (criterion == InfillCriterion.ExpectedImprovement && (named >= 0 ? !objectives[named].HasGoal : !objectives.Any(o => o.HasGoal)))
        {
            notes.Add(named >= 0
                ? $"{objectives[named].Name} has no goal, so there is nothing to improve; the wave goes where it is least known instead."
                : "No response has a goal, so there is nothing to improve; the wave goes where the surrogates are least sure instead.");
            criterion = InfillCriterion.Variance;
        }

        var search = new SearchSpace(space, constraints);
        var runs = SearchSpace.Rows(codedRuns);
        var candidateCount = options.Candidates ?? Math.Clamp(300 * space.Count, 1000, 4000);
        var spread = search.Spread(candidateCount, options.Seed);
        if (spread.Count == 0)
        {
            notes.Add("No setting of the factors satisfies every constraint among the points tried, so no run can be placed.");
            return new([], notes);
        }
        var set = new ObjectiveSet(search, objectives, runs, spread.Take(512).ToList());
        int[] inPlay;
        if (named >= 0) inPlay = [named];
        else
        {
            var relevant = Enumerable.Range(0, objectives.Count).Where(r => objectives[r].HasGoal || objectives[r].HasHardLimit).ToArray();
            inPlay = relevant.Length > 0 ? relevant : [.. Enumerable.Range(0, objectives.Count)];
        }
        var scorer = new Scorer(set, inPlay, criterion, named >= 0, runs, spread, options);

        var picks = new List<double[]>();
        var proposed = new List<ProposedRun>();
        var exclusion = 0.0;
        var random = new Random(options.Seed);
        for (var pick = 0; pick < options.Count; pick++)
        {
            cancellation.ThrowIfCancellationRequested();
            var taken = runs.Concat(picks).ToList();
            var pool = new List<double[]>(spread);
            pool.AddRange(Perturbations(search, scorer.Incumbents(runs), random));
            var utilities = scorer.Utility(pool);
            for (var i = 0; i < pool.Count; i++)
                if (SearchSpace.Nearest(pool[i], taken) < Math.Max(SamePoint, exclusion) || !search.IsFeasible(pool[i])) utilities[i] = double.NegativeInfinity;
            var polished = Polish(search, scorer, pool, utilities, taken, exclusion, cancellation);
            (double[] Point, double Score) best;
            string reason;
            if (polished is not { } found || scorer.IsNone(found.Utility))
            {
                var far = pool.Where(search.IsFeasible).MaxBy(p => SearchSpace.Nearest(p, taken));
                if (far is null) break;
                best = (far, 0);
                reason = criterion == InfillCriterion.ExpectedImprovement
                    ? "expected improvement is negligible wherever the search looked (the surrogate sees no better region), so this run fills the largest gap between runs"
                    : "the surrogates give no uncertainty here, so this run fills the largest gap between runs";
            }
            else
            {
                best = (found.Point, scorer.Criterion(found.Utility));
                reason = scorer.Reason(found.Point, best.Score);
            }
            if (options.Count > 1)
                reason += string.Create(CultureInfo.InvariantCulture, $" (pick {pick + 1} of {options.Count}, {(options.Heuristic == BatchHeuristic.KrigingBeliever ? "kriging believer" : "constant liar")})");
            var point = best.Point;
            picks.Add(point);
            var natural = space.FromCoded(point);
            proposed.Add(new ProposedRun(point, natural, space.ToValues(natural), best.Score, reason));
            if (pick + 1 < options.Count && !scorer.Condition(point, options.Heuristic) && exclusion == 0)
            {
                exclusion = 0.1 * Math.Sqrt(space.Count);
                notes.Add(string.Create(CultureInfo.InvariantCulture,
                    $"A surrogate could not take the picks as fantasised runs, so the picks are kept at least {exclusion:G3} apart (coded) instead."));
            }
        }
        return new(proposed, notes);
    }

    /// <summary>Verification runs for chosen candidates: each candidate's own setting.</summary>
    public static IReadOnlyList<ProposedRun> Verify(FactorSpace space, IEnumerable<Candidate> candidates)
    {
        ArgumentNullException.ThrowIfNull(space);
        ArgumentNullException.ThrowIfNull(candidates);
        var search = new SearchSpace(space, DesignConstraints.None);
        return [.. candidates.Select(c =>
        {
            var coded = c.Coded.ToArray();
            search.Repair(coded);
            var natural = space.FromCoded(coded);
            return new ProposedRun(coded, natural, space.ToValues(natural), c.Desirability,
                string.Create(CultureInfo.InvariantCulture, $"verification of candidate {c.Rank} (predicted desirability {c.Desirability:G3})"));
        })];
    }

    private static NextWaveResult Maximin(FactorSpace space, Matrix<double> codedRuns, DesignConstraints constraints, NextWaveOptions options, List<string> notes)
    {
        var added = DesignAugmentation.Augment(new DesignMatrix(space, codedRuns), options.Count, constraints, new AugmentOptions(options.Seed, options.Candidates));
        if (!added.IsOk)
        {
            notes.Add(added.Message ?? "The wave could not be placed.");
            return new([], notes);
        }
        var runs = SearchSpace.Rows(codedRuns);
        var rows = SearchSpace.Rows(added.Value!.Coded);
        var proposed = new List<ProposedRun>(rows.Count);
        for (var i = 0; i < rows.Count; i++)
        {
            var others = runs.Concat(rows.Where((_, j) => j != i)).ToList();
            var distance = SearchSpace.Nearest(rows[i], others);
            var natural = space.FromCoded(rows[i]);
            proposed.Add(new ProposedRun(rows[i], natural, space.ToValues(natural), distance,
                string.Create(CultureInfo.InvariantCulture, $"space filling: {distance:G3} (coded) from the nearest run or other new run")));
        }
        return new(proposed, notes);
    }

    /// <summary>Gaussian steps of 0.02 and 0.1 (coded) around the incumbents, repaired, feasible ones only.</summary>
    private static List<double[]> Perturbations(SearchSpace search, IReadOnlyList<double[]> centres, Random random)
    {
        var points = new List<double[]>();
        foreach (var centre in centres)
            foreach (var scale in new[] { 0.02, 0.1 })
                for (var s = 0; s < 25; s++)
                {
                    var point = new double[centre.Length];
                    for (var j = 0; j < point.Length; j++) point[j] = centre[j] + scale * Gaussian(random);
                    search.Repair(point);
                    if (search.IsFeasible(point)) points.Add(point);
                }
        return points;
    }

    private static double Gaussian(Random random) =>
        Math.Sqrt(-2 * Math.Log(1 - random.NextDouble())) * Math.Cos(2 * Math.PI * random.NextDouble());

    /// <summary>The best of the <see cref="PolishStarts"/> best distinct pool points after a quasi-Newton polish of the
    /// search utility; null when every utility is −∞.</summary>
    private static (double[] Point, double Utility)? Polish(SearchSpace search, Scorer scorer, List<double[]> pool, double[] utilities,
        List<double[]> taken, double exclusion, CancellationToken cancellation)
    {
        var order = Enumerable.Range(0, pool.Count).Where(i => double.IsFinite(utilities[i])).OrderByDescending(i => utilities[i]).ToList();
        if (order.Count == 0) return null;
        var starts = new List<int>();
        foreach (var i in order)
        {
            if (starts.Count == PolishStarts) break;
            if (starts.All(s => SearchSpace.Distance(pool[s], pool[i]) > 0.05)) starts.Add(i);
        }
        (double[] Point, double Utility)? best = null;
        foreach (var i in starts)
        {
            var polished = LocalPolish.Maximize(search, pool[i], points =>
            {
                var values = scorer.Utility(points);
                for (var p = 0; p < points.Count; p++)
                    if (!search.IsFeasible(points[p]) || SearchSpace.Nearest(points[p], taken) < Math.Max(SamePoint, exclusion))
                        values[p] = double.NegativeInfinity;
                return values;
            }, 25, cancellation);
            if (best is null || polished.Score > best.Value.Utility) best = polished;
        }
        return best;
    }

    /// <summary>The criterion at a batch of points with the current (possibly conditioned) surrogates, and what the
    /// picks change.</summary>
    private sealed class Scorer
    {
        private readonly ObjectiveSet _set;
        private readonly int[] _inPlay;
        private readonly InfillCriterion _criterion;
        private readonly bool _single;
        private readonly IResponseSurrogate[] _models;
        private readonly double[][] _draws;
        private readonly double[] _varianceScale;
        private readonly double[] _lies;
        private readonly List<double[]> _runs;
        private readonly double[] _runValues; // the criterion's own value at each run: response value or desirability
        private double _best;
        private readonly double _spreadOfValues;

        /// <summary>True when the search climbs ln EI rather than EI: expected improvement of one response with a
        /// minimize or maximize goal, analytic, so its logarithm is exact where EI itself underflows.</summary>
        private readonly bool _logScale;

        /// <summary>A criterion value at or below this counts as none (see <see cref="IsNone"/>).</summary>
        private readonly double _negligible;

        /// <summary>
        /// True when the best utility found counts as no gain, and the pick fills the largest gap between runs instead.
        /// For the analytic expected improvement of one response only an exact zero counts (ln EI = −∞: no uncertainty
        /// and no predicted gain anywhere); however small EI is, its log still ranks where a better value is least
        /// unlikely, which is exploration, whereas the largest gap in several factors is a corner of the box. For the
        /// Monte Carlo expected improvement of a desirability, 1e-6 of the spread of the values at the runs (our own
        /// rule); for the variance, zero.
        /// </summary>
        public bool IsNone(double utility) => _logScale ? !double.IsFinite(utility) : !(utility > _negligible);

        public Scorer(ObjectiveSet set, int[] inPlay, InfillCriterion criterion, bool single, List<double[]> runs, List<double[]> spread,
            NextWaveOptions options)
        {
            _set = set;
            _inPlay = inPlay;
            _criterion = criterion;
            _single = single;
            _runs = runs;
            _models = [.. set.Objectives.Select(o => o.Surrogate)];
            _draws = ExpectedImprovement.NormalDraws(options.Draws, inPlay.Length, options.Seed);
            _varianceScale = new double[set.Objectives.Count];
            _lies = new double[set.Objectives.Count];
            _runValues = new double[runs.Count];
            _logScale = criterion == InfillCriterion.ExpectedImprovement && IsAnalytic;

            if (criterion == InfillCriterion.Variance)
            {
                var matrix = SearchSpace.ToMatrix(spread, set.Search.Dimension);
                foreach (var r in inPlay)
                {
                    var sd = _models[r].Predict(matrix).StandardDeviation;
                    var largest = sd is null ? 0 : sd.Max();
                    _varianceScale[r] = largest > 0 ? largest : 1;
                }
                return;
            }

            // The values at the runs: observed where given (in the runs' order), else predicted.
            var predicted = set.Means(runs);
            var values = new double[set.Objectives.Count][];
            for (var r = 0; r < set.Objectives.Count; r++)
                values[r] = set.Objectives[r].Observed is { } observed && observed.Count == runs.Count ? [.. observed] : predicted[r];
            for (var i = 0; i < runs.Count; i++) _runValues[i] = RunValue(values, i);
            var incumbent = runs.Count == 0 ? -1 : Enumerable.Range(0, runs.Count).MaxBy(i => _runValues[i]);
            var spreadOfValues = runs.Count == 0 ? 0 : _runValues.Max() - _runValues.Min();
            _spreadOfValues = spreadOfValues > 0 ? spreadOfValues : 1;
            _negligible = _logScale ? 0 : 1e-6 * _spreadOfValues;
            _best = incumbent < 0 ? double.NegativeInfinity : _runValues[incumbent];
            for (var r = 0; r < set.Objectives.Count; r++) _lies[r] = incumbent < 0 ? 0 : values[r][incumbent];
        }

        /// <summary>One response with a minimize or maximize goal: its expected improvement is analytic.</summary>
        private bool IsAnalytic => _single && _set.Objectives[_inPlay[0]].Goal is ResponseGoal.Minimize or ResponseGoal.Maximize;

        /// <summary>Larger is better: the response (negated when minimised) for one response with a minimize or
        /// maximize goal, otherwise the desirability (of that response, or overall).</summary>
        private double RunValue(double[][] values, int i)
        {
            if (IsAnalytic)
                return _set.Objectives[_inPlay[0]].Goal == ResponseGoal.Minimize ? -values[_inPlay[0]][i] : values[_inPlay[0]][i];
            return Desirability(r => values[r][i]);
        }

        private double Desirability(Func<int, double> value)
        {
            Span<double> d = stackalloc double[_inPlay.Length];
            Span<double> w = stackalloc double[_inPlay.Length];
            var count = 0;
            foreach (var r in _inPlay)
            {
                var y = value(r);
                var objective = _set.Objectives[r];
                var dr = _set.Functions[r].Evaluate(y);
                if (!objective.HasGoal)
                {
                    if (dr == 0) return 0; // a limit-only response outside its limit
                    continue;
                }
                d[count] = dr;
                w[count++] = objective.Response.Weight;
            }
            return Optimization.Desirability.Overall(d[..count], w[..count]);
        }

        /// <summary>Runs with the best values, around which the search also looks.</summary>
        public IReadOnlyList<double[]> Incumbents(List<double[]> runs) => _criterion == InfillCriterion.Variance
            ? []
            : [.. Enumerable.Range(0, runs.Count).OrderByDescending(i => _runValues[i]).Take(5).Select(i => runs[i])];

        /// <summary>The criterion from a search utility (the same but for LogEI).</summary>
        public double Criterion(double utility) => _logScale ? Math.Exp(utility) : utility;

        /// <summary>What the search maximises at a batch of points: the criterion, or ln EI for the analytic expected
        /// improvement.</summary>
        public double[] Utility(IReadOnlyList<double[]> points)
        {
            var matrix = SearchSpace.ToMatrix(points, _set.Search.Dimension);
            var predictions = new Prediction?[_models.Length];
            foreach (var r in _inPlay) predictions[r] = _models[r].Predict(matrix);
            var scores = new double[points.Count];
            for (var i = 0; i < points.Count; i++) scores[i] = ScoreAt(predictions, i);
            return scores;
        }

        private double ScoreAt(Prediction?[] predictions, int i)
        {
            if (_criterion == InfillCriterion.Variance)
            {
                var sum = 0.0;
                foreach (var r in _inPlay)
                {
                    var sd = predictions[r]!.StandardDeviation?[i] ?? 0;
                    sum += sd * sd / (_varianceScale[r] * _varianceScale[r]);
                }
                return sum;
            }
            var objective = _set.Objectives[_inPlay[0]];
            if (IsAnalytic)
            {
                var p = predictions[_inPlay[0]]!;
                var mean = p.Mean[i];
                var sd = p.StandardDeviation?[i] ?? 0;
                return objective.Goal == ResponseGoal.Minimize
                    ? ExpectedImprovement.LogBelowBest(mean, sd, -_best)
                    : ExpectedImprovement.LogAboveBest(mean, sd, _best);
            }
            // Monte Carlo over the predictive normals of the responses in play, with common draws.
            var total = 0.0;
            foreach (var draw in _draws)
            {
                var d = Desirability(r =>
                {
                    var slot = Array.IndexOf(_inPlay, r);
                    var p = predictions[r]!;
                    return p.Mean[i] + (p.StandardDeviation?[i] ?? 0) * draw[slot];
                });
                total += Math.Max(d - _best, 0);
            }
            return total / _draws.Length;
        }

        public string Reason(double[] point, double score)
        {
            var matrix = SearchSpace.ToMatrix([point], _set.Search.Dimension);
            string Describe(int r)
            {
                var p = _models[r].Predict(matrix);
                var sd = p.StandardDeviation?[0];
                return string.Create(CultureInfo.InvariantCulture,
                    $"{_set.Objectives[r].Name} {p.Mean[0]:G4}{(sd is { } s ? $" ± {s:G3}" : "")}");
            }
            var predicted = string.Join(", ", _inPlay.Select(Describe));
            if (_criterion == InfillCriterion.Variance)
                return $"largest predictive uncertainty (predicted {predicted})";
            var objective = _set.Objectives[_inPlay[0]];
            if (IsAnalytic)
                return string.Create(CultureInfo.InvariantCulture,
                    $"expected improvement {score:G3} in {objective.Name} over the best so far, {(objective.Goal == ResponseGoal.Minimize ? -_best : _best):G4} (predicted {predicted})")
                    + (score < 1e-6 * _spreadOfValues
                        ? "; the surrogate sees almost no chance of a better value anywhere, and this is where the chance is largest"
                        : "");
            return string.Create(CultureInfo.InvariantCulture,
                $"expected improvement {score:G3} in {(_single ? $"the desirability of {objective.Name}" : "overall desirability")} over the best so far, {_best:G3} (predicted {predicted})");
        }

        /// <summary>Adds the pick to every surrogate in play as a fantasised run; false when one cannot take it.</summary>
        public bool Condition(double[] point, BatchHeuristic heuristic)
        {
            var matrix = SearchSpace.ToMatrix([point], _set.Search.Dimension);
            var all = true;
            var fantasy = new double[_models.Length];
            foreach (var r in _inPlay)
            {
                var mean = _models[r].PredictMean(matrix)[0];
                fantasy[r] = heuristic == BatchHeuristic.KrigingBeliever || _criterion == InfillCriterion.Variance ? mean : _lies[r];
                var conditioned = _models[r] is IConditionableSurrogate c ? c.Condition(matrix, [fantasy[r]]) : null;
                if (conditioned is null) all = false;
                else _models[r] = conditioned;
            }
            // The believed value counts as data: it may become the best so far.
            if (_criterion == InfillCriterion.ExpectedImprovement)
                _best = Math.Max(_best, RunValue([.. fantasy.Select(v => new[] { v })], 0));
            return all;
        }
    }
}
