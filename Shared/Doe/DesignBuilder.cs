using System.Globalization;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

/// <summary>
/// The one entry point from a design request (DESIGN.md §5 <c>Design</c>) to a design matrix: checks the
/// request against the factor space and the limits, then calls the method's generator. Invalid fields are
/// <see cref="OutcomeKind.Invalid"/> (HTTP 400); a design over the run limit or constraints that leave no
/// feasible run are <see cref="OutcomeKind.Unprocessable"/> (HTTP 422).
/// </summary>
public static class DesignBuilder
{
    public const int DefaultSeed = 1;
    public const int MaxCenterPoints = 100;

    private const string SpaceFillingAdvice = "a space-filling design (latinHypercube or sobol) with the run count you can afford";

    public static Outcome<GeneratedDesign> Build(FactorSpace space, DesignSpec? spec, DesignLimits? limits = null)
    {
        ArgumentNullException.ThrowIfNull(space);
        limits ??= DesignLimits.Default;
        if (spec is null) return Invalid("design", "The study needs a design, for example {\"method\": \"fullFactorial\"}.");

        var errors = new ValidationErrors();
        if (!Enum.IsDefined(spec.Method))
            errors.Add("design.method", "The method must be fullFactorial, fractionalFactorial, centralComposite, boxBehnken, latinHypercube, sobol or dOptimal.");
        if (spec.Runs is < 1) errors.Add("design.runs", "A design needs at least one run.");
        if (spec.CenterPoints is < 0 or > MaxCenterPoints)
            errors.Add("design.centerPoints", $"Give between 0 and {MaxCenterPoints} centre runs (one is enough for deterministic simulations).");
        if (spec.Alpha is { } alpha && (!double.IsFinite(alpha) || alpha <= 0))
            errors.Add("design.alpha", "α must be a positive finite number (the axial distance in coded units).");
        if (spec.Resolution is < 3 or > 16)
            errors.Add("design.resolution", "The resolution must be between 3 (III) and 16; 4 (IV) keeps main effects clear of two-factor interactions, 5 (V) keeps two-factor interactions clear of each other.");
        if (spec.Variant is { } variant && !Enum.IsDefined(variant))
            errors.Add("design.variant", "The variant must be circumscribed, inscribed or faceCentered.");
        if (!DesignModel.TryParseKind(spec.Model, DefaultModel(spec.Method), out var model))
            errors.Add("design.model", "The model must be linear, interactions or quadratic.");
        var constraints = DesignConstraints.Parse(spec.Constraints, space);
        errors.AddRange(constraints.Errors);
        if (!errors.IsEmpty) return Outcome<GeneratedDesign>.Invalid(errors);

        var context = new Context(space, spec, limits, constraints.Value!, model, spec.Seed ?? DefaultSeed);
        if (!context.Constraints.IsEmpty)
        {
            var (feasible, drawn) = SpaceFilling.FeasibleCandidates(space, context.Constraints, wanted: 1, maxDraws: 16_384, seed: context.Seed);
            if (feasible.Count == 0)
                return Outcome<GeneratedDesign>.Unprocessable(One("design.constraints",
                    $"No run within the factor ranges satisfies all the constraints ({drawn:N0} spread settings were tried). " +
                    "Check the direction of each inequality and the factor ranges."));
        }

        var built = spec.Method switch
        {
            DesignMethod.FullFactorial => BuildFullFactorial(context),
            DesignMethod.FractionalFactorial => BuildFractionalFactorial(context),
            DesignMethod.CentralComposite => BuildCentralComposite(context),
            DesignMethod.BoxBehnken => BuildBoxBehnken(context),
            DesignMethod.LatinHypercube => BuildLatinHypercube(context),
            DesignMethod.Sobol => BuildSobol(context),
            DesignMethod.DOptimal => BuildDOptimal(context),
            _ => Invalid("design.method", $"The design method '{spec.Method}' is not known."),
        };
        return built.IsOk ? Outcome<GeneratedDesign>.Ok(Finish(context, built.Value!)) : built;
    }

    /// <summary>The model a design is judged by when the request names none.</summary>
    public static DesignModelKind DefaultModel(DesignMethod method) => method switch
    {
        DesignMethod.CentralComposite or DesignMethod.BoxBehnken or DesignMethod.DOptimal => DesignModelKind.Quadratic,
        _ => DesignModelKind.Linear,
    };

    /// <summary>The refusal sentence for a design over the limit, with the count it would need.</summary>
    public static string TooManyRuns(double runs, DesignLimits limits, string suggestion)
    {
        ArgumentNullException.ThrowIfNull(limits);
        var count = runs < 1e15 ? runs.ToString("N0", CultureInfo.InvariantCulture) : runs.ToString("0.###e+0", CultureInfo.InvariantCulture);
        return $"This design needs {count} runs, more than the limit of {limits.MaxRuns.ToString("N0", CultureInfo.InvariantCulture)}. Use {suggestion}, or fewer levels.";
    }

    private sealed record Context(FactorSpace Space, DesignSpec Spec, DesignLimits Limits, DesignConstraints Constraints, DesignModelKind Model, int Seed);

    // ---- full factorial ------------------------------------------------------------------------------------

    private static Outcome<GeneratedDesign> BuildFullFactorial(Context c)
    {
        var errors = new ValidationErrors();
        var levels = LevelCounts(c.Space, c.Spec.Levels, FullFactorial.DefaultLevels(c.Space), "full factorial", errors);
        if (c.Spec.CenterPoints is > 0) CheckCenterable(c.Space, "centre runs", errors);
        if (!errors.IsEmpty) return Outcome<GeneratedDesign>.Invalid(errors);

        var centre = c.Spec.CenterPoints ?? 0;
        var runs = FullFactorial.RunCount(levels) + centre;
        if (runs > c.Limits.MaxRuns)
            return TooMany(runs, c.Limits, "a fractional factorial or " + SpaceFillingAdvice);

        var matrix = WithCentre(FullFactorial.Generate(c.Space, levels).Coded, centre);
        return Ok(c, matrix, DesignMethod.FullFactorial,
            $"Full factorial {string.Join(" × ", levels)} = {FullFactorial.RunCount(levels):N0} runs{CentreText(centre)}.");
    }

    /// <summary>One level count for every numeric factor, or one per factor; categorical factors use all levels.</summary>
    private static int[] LevelCounts(FactorSpace space, IReadOnlyList<int>? asked, int[] defaults, string method, ValidationErrors errors)
    {
        var levels = (int[])defaults.Clone();
        if (asked is not { Count: > 0 }) return levels;
        if (asked.Count != 1 && asked.Count != space.Count)
        {
            errors.Add("design.levels", $"Give one level count for all factors or one per factor ({space.Count}); {asked.Count} were given.");
            return levels;
        }
        for (var j = 0; j < space.Count; j++)
        {
            var factor = space[j];
            if (asked.Count == 1 && factor.IsCategorical) continue; // one count applies to the numeric factors
            var l = asked.Count == 1 ? asked[0] : asked[j];
            var field = asked.Count == 1 ? "design.levels" : $"design.levels[{j}]";
            if (l < 2)
                errors.Add(field, $"'{factor.Name}' needs at least 2 levels in a {method}; {l} was given.");
            else if (factor.IsCategorical && l != factor.Levels.Count)
                errors.Add(field, $"The categorical factor '{factor.Name}' has {factor.Levels.Count} levels; a {method} uses all of them.");
            else if (factor.Kind == FactorKind.Integer && l > factor.High - factor.Low + 1)
                errors.Add(field, string.Create(CultureInfo.InvariantCulture,
                    $"The integer factor '{factor.Name}' has only {factor.High - factor.Low + 1} whole values between {factor.Low} and {factor.High}; {l} levels cannot be distinct."));
            else levels[j] = l;
        }
        return levels;
    }

    // ---- fractional factorial ------------------------------------------------------------------------------

    private static Outcome<GeneratedDesign> BuildFractionalFactorial(Context c)
    {
        var errors = new ValidationErrors();
        var k = c.Space.Count;
        if (k > FractionalFactorial.MaxFactors)
            errors.Add("design.method", $"Fractional factorials are tabulated for up to {FractionalFactorial.MaxFactors} factors; this study has {k}. Use {SpaceFillingAdvice} or dOptimal.");
        foreach (var f in c.Space.Factors.Where(f => f.IsCategorical && f.Levels.Count != 2))
            errors.Add("design.method", $"A two-level fractional factorial needs two-level factors; the categorical factor '{f.Name}' has {f.Levels.Count} levels. Use dOptimal or a full factorial.");
        if (c.Spec.CenterPoints is > 0) CheckCenterable(c.Space, "centre runs", errors);
        if (!errors.IsEmpty) return Outcome<GeneratedDesign>.Invalid(errors);

        FractionPlan plan;
        if (c.Spec.Runs is { } runs)
        {
            var found = FractionalFactorial.WithRuns(k, runs);
            if (found is null)
                return Invalid("design.runs", $"For {k} factors the table has {string.Join(", ", FractionalFactorial.For(k).Select(p => p.Runs).Order().Select(r => r.ToString("N0", CultureInfo.InvariantCulture)))} runs; {runs} is not one of them.");
            if (c.Spec.Resolution is { } wanted && (found.Resolution ?? int.MaxValue) < wanted)
                return Invalid("design.resolution", $"The {runs}-run fraction for {k} factors has resolution {FractionalFactorial.Roman(found.Resolution!.Value)}, below the {FractionalFactorial.Roman(wanted)} asked for; leave out runs to get the smallest fraction that meets it.");
            plan = found;
        }
        else plan = FractionalFactorial.Smallest(k, c.Spec.Resolution ?? 4);

        var centre = c.Spec.CenterPoints ?? 0;
        if (plan.Runs + centre > c.Limits.MaxRuns)
            return TooMany(plan.Runs + centre, c.Limits, $"a lower resolution or {SpaceFillingAdvice}");
        var coded = WithCentre(FractionalFactorial.Generate(plan), centre);
        var summary = FractionalFactorial.Summarize(plan, c.Space);
        var note = plan.Fraction == 0
            ? $"Full two-level factorial 2^{k} = {plan.Runs:N0} runs: the published table has no smaller fraction of resolution {FractionalFactorial.Roman(c.Spec.Resolution ?? 4)} or more for {k} factors."
            : $"Fractional factorial 2^({k}−{plan.Fraction}) resolution {FractionalFactorial.Roman(plan.Resolution!.Value)} = {plan.Runs:N0} runs ({string.Join(", ", summary.Generators)}; {plan.Source}).";
        var result = Ok(c, coded, DesignMethod.FractionalFactorial, note + CentreText(centre, sentence: true));
        return Outcome<GeneratedDesign>.Ok(result.Value! with { Fraction = summary });
    }

    // ---- central composite ---------------------------------------------------------------------------------

    private static Outcome<GeneratedDesign> BuildCentralComposite(Context c)
    {
        var errors = new ValidationErrors();
        var k = c.Space.Count;
        if (k < 2) errors.Add("factors", "A central composite design needs at least two factors.");
        if (k > FractionalFactorial.MaxFactors) errors.Add("factors", $"Central composite designs here cover up to {FractionalFactorial.MaxFactors} factors; use {SpaceFillingAdvice}.");
        CheckNumeric(c.Space, "A central composite design", errors);
        var variant = c.Spec.Variant ?? CentralCompositeVariant.Circumscribed;
        if (variant == CentralCompositeVariant.FaceCentered && c.Spec.Alpha is { } a && Math.Abs(a - 1) > 1e-12)
            errors.Add("design.alpha", "A face-centred design has α = 1; leave α out or choose circumscribed or inscribed.");
        if (variant == CentralCompositeVariant.Inscribed && c.Spec.Alpha is < 1)
            errors.Add("design.alpha", "An inscribed design needs α ≥ 1 (its factorial runs sit at ±1/α).");
        if (!errors.IsEmpty) return Outcome<GeneratedDesign>.Invalid(errors);

        var layout = CentralComposite.Plan(k, variant, c.Spec.Alpha, c.Spec.CenterPoints ?? 1);
        if (layout.RunCount > c.Limits.MaxRuns)
            return TooMany(layout.RunCount, c.Limits, SpaceFillingAdvice);
        var summary = CentralComposite.Summarize(layout, c.Space);
        var core = layout.Core.Fraction == 0
            ? $"full factorial 2^{k} = {layout.Core.Runs}"
            : $"2^({k}−{layout.Core.Fraction}) resolution {FractionalFactorial.Roman(layout.Core.Resolution!.Value)} = {layout.Core.Runs}";
        var note = string.Create(CultureInfo.InvariantCulture,
            $"Central composite ({Word(variant)}, α = {layout.Alpha:0.###}{(layout.Rotatable ? ", rotatable" : "")}): {core} factorial + {layout.AxialRuns} axial + {layout.CenterRuns} centre = {layout.RunCount} runs.");
        // Inside the ranges the layout is a note; outside, it leads the warnings (and the composite summary).
        var result = layout.StaysInsideRanges
            ? Ok(c, CentralComposite.Generate(layout), DesignMethod.CentralComposite, note, summary.Note)
            : Ok(c, CentralComposite.Generate(layout), DesignMethod.CentralComposite, note);
        var warnings = result.Value!.Warnings.ToList();
        if (!layout.StaysInsideRanges) warnings.Insert(0, summary.Note);
        foreach (var f in c.Space.Factors.Where(f => f.Low >= 0 && f.Scale == FactorScale.Linear && f.FromCoded(-layout.Alpha) < 0 && !layout.StaysInsideRanges))
            warnings.Add(string.Create(CultureInfo.InvariantCulture, $"'{f.Name}' reaches {f.FromCoded(-layout.Alpha):G4} at −α, below zero although its range starts at {f.Low}."));
        return Outcome<GeneratedDesign>.Ok(result.Value! with { Composite = summary, Warnings = warnings });
    }

    // ---- Box–Behnken ---------------------------------------------------------------------------------------

    private static Outcome<GeneratedDesign> BuildBoxBehnken(Context c)
    {
        var errors = new ValidationErrors();
        var k = c.Space.Count;
        if (k is < BoxBehnken.MinFactors or > BoxBehnken.MaxFactors)
            errors.Add("factors", $"Box–Behnken designs are published here for {BoxBehnken.MinFactors} to {BoxBehnken.MaxFactors} factors; this study has {k}. Use centralComposite, dOptimal or {SpaceFillingAdvice}.");
        CheckNumeric(c.Space, "A Box–Behnken design", errors);
        if (!errors.IsEmpty) return Outcome<GeneratedDesign>.Invalid(errors);

        var centre = c.Spec.CenterPoints ?? 1;
        var edge = BoxBehnken.EdgeRuns(k);
        if (edge + centre > c.Limits.MaxRuns) return TooMany(edge + centre, c.Limits, SpaceFillingAdvice);
        return Ok(c, BoxBehnken.Generate(k, centre), DesignMethod.BoxBehnken,
            $"Box–Behnken for {k} factors: {edge} edge runs + {centre} centre = {edge + centre} runs, three levels per factor, every run inside the factor ranges (no corner runs).");
    }

    // ---- space-filling -------------------------------------------------------------------------------------

    private static int SpaceFillingRuns(Context c, out string? note)
    {
        note = null;
        if (c.Spec.Runs is { } runs) return runs;
        note = $"{10 * c.Space.Count} runs: ten per factor, the rule of thumb of Loeppky, Sacks & Welch (2009).";
        return 10 * c.Space.Count;
    }

    private static Outcome<GeneratedDesign> BuildLatinHypercube(Context c)
    {
        var runs = SpaceFillingRuns(c, out var defaultNote);
        if (runs > c.Limits.MaxRuns) return TooMany(runs, c.Limits, "fewer runs");
        var maximin = c.Spec.Maximin ?? true;
        var notes = new List<string>();
        var warnings = new List<string>();
        Matrix<double> coded;
        if (!c.Constraints.IsEmpty)
        {
            var picked = ConstrainedSpread(c, runs);
            if (!picked.IsOk) return picked.As<GeneratedDesign>();
            coded = picked.Value!;
            notes.Add($"Space-filling design of {runs} runs inside the constrained region (seed {c.Seed}): the constraints cut the Latin hypercube's strata, so the runs are a maximin selection among spread feasible settings instead.");
        }
        else
        {
            var unit = maximin ? LatinHypercube.Maximin(runs, c.Space.Count, c.Seed) : LatinHypercube.Random(runs, c.Space.Count, c.Seed);
            coded = UnitCube.ToCoded(c.Space, unit);
            notes.Add(maximin
                ? $"Maximin Latin hypercube of {runs} runs (enhanced stochastic evolutionary search, seed {c.Seed})."
                : $"Random Latin hypercube of {runs} runs (seed {c.Seed}).");
            if (maximin && runs > LatinHypercubeOptions.MaxOptimisedRuns)
                warnings.Add($"Above {LatinHypercubeOptions.MaxOptimisedRuns:N0} runs the maximin search is skipped; this Latin hypercube is random (centred in its strata).");
        }
        if (defaultNote is not null) notes.Add(defaultNote);
        return Ok(c, coded, DesignMethod.LatinHypercube, [.. notes], warnings);
    }

    private static Outcome<GeneratedDesign> BuildSobol(Context c)
    {
        var runs = SpaceFillingRuns(c, out var defaultNote);
        if (runs > c.Limits.MaxRuns) return TooMany(runs, c.Limits, "fewer runs");
        if (c.Space.Count > SobolSequence.MaxDimensions)
            return Invalid("factors", $"The Sobol' table covers {SobolSequence.MaxDimensions} factors; this study has {c.Space.Count}.");
        var scramble = c.Spec.Scramble ?? false;
        var notes = new List<string>();
        var warnings = new List<string>();
        var rows = new List<double[]>(runs);
        var drawn = 0;
        // Constraints: keep the sequence's order and skip the settings that break them (acceptance–rejection).
        for (var batch = Math.Max(runs, 64); rows.Count < runs && drawn < 64 * Math.Max(runs, 1024); batch *= 2)
        {
            var unit = SobolSequence.Generate(drawn + batch, c.Space.Count, scramble, c.Seed);
            for (var i = drawn; i < drawn + batch && rows.Count < runs; i++)
            {
                var coded = new double[c.Space.Count];
                for (var j = 0; j < c.Space.Count; j++) coded[j] = UnitCube.ToCoded(c.Space[j], unit[i, j]);
                if (c.Constraints.IsFeasible(c.Space.FromCoded(coded))) rows.Add(coded);
            }
            drawn += batch;
            if (c.Constraints.IsEmpty) break;
        }
        if (rows.Count < runs)
            return Outcome<GeneratedDesign>.Unprocessable(One("design.constraints",
                $"Only {rows.Count} of {drawn:N0} Sobol' settings satisfy the constraints; the feasible region is too small for {runs} runs. Relax the constraints or ask for fewer runs."));
        notes.Add(scramble
            ? $"Scrambled Sobol' sequence, {runs} runs (linear matrix scramble and digital shift, seed {c.Seed}; Joe–Kuo direction numbers)."
            : $"Sobol' sequence, first {runs} points (Joe–Kuo direction numbers, unscrambled; the first run is the all-low corner).");
        if (!c.Constraints.IsEmpty) notes.Add("Settings that break a constraint are skipped in sequence order.");
        if (defaultNote is not null) notes.Add(defaultNote);
        if ((runs & (runs - 1)) != 0)
            warnings.Add($"Sobol' points are balanced when the run count is a power of two; {runs} is not (try {1 << (int)Math.Round(Math.Log2(runs))}).");
        return Ok(c, SpaceFilling.ToMatrix(rows, c.Space.Count), DesignMethod.Sobol, [.. notes], warnings);
    }

    private static Outcome<Matrix<double>> ConstrainedSpread(Context c, int runs)
    {
        var wanted = Math.Clamp(50 * runs, 2_000, 20_000);
        var (candidates, drawn) = SpaceFilling.FeasibleCandidates(c.Space, c.Constraints, wanted, maxDraws: 40 * wanted, c.Seed);
        var distinct = candidates.Select(r => string.Join(",", r)).Distinct().Count();
        if (distinct < runs)
            return Outcome<Matrix<double>>.Unprocessable(One("design.constraints",
                $"Only {distinct} distinct feasible settings were found among {drawn:N0} spread points; the feasible region is too small for {runs} runs."));
        return Outcome<Matrix<double>>.Ok(SpaceFilling.ToMatrix(SpaceFilling.GreedyMaximin(candidates, [], runs), c.Space.Count));
    }

    // ---- D-optimal -----------------------------------------------------------------------------------------

    private static Outcome<GeneratedDesign> BuildDOptimal(Context c)
    {
        var errors = new ValidationErrors();
        var constrained = !c.Constraints.IsEmpty;
        var defaults = c.Space.Factors.Select(f => DOptimal.DefaultLevels(f, constrained)).ToArray();
        var counts = LevelCounts(c.Space, c.Spec.Levels, [.. defaults.Select(d => d.Length)], "D-optimal design", errors);
        if (c.Model == DesignModelKind.Quadratic)
            for (var j = 0; j < c.Space.Count; j++)
                if (counts[j] < 3 && (c.Space[j].Kind == FactorKind.Continuous || (c.Space[j].Kind == FactorKind.Integer && c.Space[j].High - c.Space[j].Low >= 2)))
                    errors.Add(c.Spec.Levels is { Count: > 1 } ? $"design.levels[{j}]" : "design.levels",
                        $"The quadratic model needs at least three levels of '{c.Space[j].Name}' to estimate its curvature; {counts[j]} were given.");
        var terms = new DesignModel(c.Space, c.Model).TermCount;
        var runs = c.Spec.Runs ?? (int)Math.Ceiling(1.5 * terms);
        if (runs < terms)
            errors.Add("design.runs", $"The {Word(c.Model)} model has {terms} terms, so a D-optimal design needs at least {terms} runs; {runs} were asked for.");
        if (!errors.IsEmpty) return Outcome<GeneratedDesign>.Invalid(errors);
        if (runs > c.Limits.MaxRuns) return TooMany(runs, c.Limits, "fewer runs");

        var levels = c.Space.Factors.Select((f, j) => counts[j] == defaults[j].Length
            ? defaults[j]
            : [.. FullFactorial.LevelPositions(f, counts[j]).Distinct()]).ToArray();
        var coded = DOptimal.Generate(c.Space, new DOptimalOptions(runs, c.Model, levels, c.Constraints, c.Seed), out var problem);
        if (coded is null) return Outcome<GeneratedDesign>.Unprocessable(One("design.runs", problem!));
        var notes = new List<string>
        {
            $"D-optimal design of {runs} runs for the {Word(c.Model)} model ({terms} terms) by coordinate exchange over {string.Join(" × ", levels.Select(l => l.Length))} allowed levels (seed {c.Seed}).",
        };
        if (c.Spec.Runs is null) notes.Add($"{runs} runs: one and a half times the model's terms (common practice), leaving room to check the fit.");
        return Ok(c, coded, DesignMethod.DOptimal, [.. notes]);
    }

    // ---- shared --------------------------------------------------------------------------------------------

    private static Outcome<GeneratedDesign> Ok(Context c, Matrix<double> coded, DesignMethod method, params string[] notes) =>
        Ok(c, coded, method, notes, []);

    private static Outcome<GeneratedDesign> Ok(Context c, Matrix<double> coded, DesignMethod method, string[] notes, IReadOnlyList<string> warnings)
    {
        var snapped = Snap(c.Space, coded);
        var design = new DesignMatrix(c.Space, snapped);
        return Outcome<GeneratedDesign>.Ok(new GeneratedDesign(design, method, notes) { Model = c.Model, Warnings = warnings });
    }

    /// <summary>Constraint violations and rounding effects, known only once the runs exist.</summary>
    private static GeneratedDesign Finish(Context c, GeneratedDesign design)
    {
        var warnings = design.Warnings.ToList();
        var violations = c.Constraints.Violations(design.Matrix);
        if (violations.Count > 0)
            warnings.Add($"{violations.Count} of {design.Matrix.RunCount} runs break the constraints ({string.Join(", ", violations.Take(10).Select(v => v.Run))}{(violations.Count > 10 ? ", …" : "")}); {Word(design.Method)} designs keep their published layout, so drop or move those runs, or choose latinHypercube, sobol or dOptimal, which honour constraints.");
        var rows = design.Matrix.NaturalRows().Select(r => string.Join(",", r.Select(v => v.ToString("R", CultureInfo.InvariantCulture)))).ToList();
        var repeats = rows.Count - rows.Distinct().Count() - Math.Max(0, CenterRuns(c, design) - 1);
        if (repeats > 0 && c.Space.Factors.Any(f => f.Kind == FactorKind.Integer))
            warnings.Add($"{repeats} runs repeat another run once integer factors are rounded to whole values.");
        return design with { ConstraintViolations = violations, Warnings = warnings };
    }

    private static int CenterRuns(Context c, GeneratedDesign design) => design.Method switch
    {
        DesignMethod.CentralComposite or DesignMethod.BoxBehnken => c.Spec.CenterPoints ?? 1,
        DesignMethod.FullFactorial or DesignMethod.FractionalFactorial => c.Spec.CenterPoints ?? 0,
        _ => 0,
    };

    /// <summary>Integer and categorical factors take whole values: their coded entries are moved to the coded
    /// position of the rounded natural value, so metrics and distances describe the runs as they will be run.</summary>
    private static Matrix<double> Snap(FactorSpace space, Matrix<double> coded)
    {
        for (var j = 0; j < space.Count; j++)
        {
            var f = space[j];
            if (f.Kind == FactorKind.Continuous) continue;
            for (var i = 0; i < coded.RowCount; i++) coded[i, j] = f.ToCoded(f.FromCoded(coded[i, j]));
        }
        return coded;
    }

    private static Matrix<double> WithCentre(Matrix<double> coded, int centre) =>
        centre == 0 ? coded : coded.Stack(Matrix<double>.Build.Dense(centre, coded.ColumnCount));

    private static string CentreText(int centre, bool sentence = false) => centre switch
    {
        0 => "",
        _ when sentence => $" Plus {centre} centre run{(centre == 1 ? "" : "s")}.",
        _ => $" + {centre} centre run{(centre == 1 ? "" : "s")}",
    };

    private static void CheckNumeric(FactorSpace space, string design, ValidationErrors errors)
    {
        foreach (var f in space.Factors.Where(f => f.IsCategorical))
            errors.Add($"factors[{f.Position}].kind",
                $"{design} needs numeric factors; '{f.Name}' is categorical. Use dOptimal, latinHypercube, sobol or a full factorial with categorical factors.");
    }

    private static void CheckCenterable(FactorSpace space, string what, ValidationErrors errors)
    {
        if (space.Factors.Any(f => f.IsCategorical))
            errors.Add("design.centerPoints", $"A categorical factor has no centre, so the design cannot have {what}; leave centerPoints out.");
    }

    private static string Word(CentralCompositeVariant variant) => variant switch
    {
        CentralCompositeVariant.Inscribed => "inscribed",
        CentralCompositeVariant.FaceCentered => "face-centred",
        _ => "circumscribed",
    };

    private static string Word(DesignModelKind model) => model.ToString().ToLowerInvariant();

    private static string Word(DesignMethod method) => method switch
    {
        DesignMethod.CentralComposite => "central composite",
        DesignMethod.BoxBehnken => "Box–Behnken",
        DesignMethod.FullFactorial => "full factorial",
        DesignMethod.FractionalFactorial => "fractional factorial",
        _ => method.ToString(),
    };

    private static Outcome<GeneratedDesign> TooMany(double runs, DesignLimits limits, string suggestion) =>
        Outcome<GeneratedDesign>.Unprocessable(One("design", TooManyRuns(runs, limits, suggestion)));

    private static Outcome<GeneratedDesign> Invalid(string field, string message) => Outcome<GeneratedDesign>.Invalid(One(field, message));

    private static ValidationErrors One(string field, string message)
    {
        var errors = new ValidationErrors();
        errors.Add(field, message);
        return errors;
    }
}
