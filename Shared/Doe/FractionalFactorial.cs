// Two-level fractional factorial designs 2^(k−p) from published generator tables (Box & Hunter 1961; NIST/SEMATECH
// e-Handbook of Statistical Methods §5.3.3.4.7; Xu 2009 for 256 runs), with the defining relation, resolution and
// alias chains.
using System.Globalization;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

/// <summary>One design of the catalogue: k factors, 2^(k−p) runs; factor k−p+i+1 is the product of the base
/// factors in <see cref="Generators"/>[i] (1-based, as the handbook writes them).</summary>
public sealed record FractionPlan(int Factors, int Fraction, IReadOnlyList<int[]> Generators, string Source)
{
    public int BaseFactors => Factors - Fraction;

    public int Runs => 1 << BaseFactors;

    /// <summary>The words of the defining relation as bit masks over the factors (bit j = factor j + 1).</summary>
    public IReadOnlyList<long> Words { get; } = DefiningWords(Factors, Generators);

    /// <summary>Length of the shortest word; null for the full factorial (no word).</summary>
    public int? Resolution => Words.Count == 0 ? null : Words.Min(w => System.Numerics.BitOperations.PopCount((ulong)w));

    private static long[] DefiningWords(int factors, IReadOnlyList<int[]> generators)
    {
        var basic = new long[generators.Count];
        var baseFactors = factors - generators.Count;
        for (var g = 0; g < generators.Count; g++)
        {
            long word = 1L << (baseFactors + g);
            foreach (var f in generators[g]) word ^= 1L << (f - 1);
            basic[g] = word;
        }
        // Every product of a non-empty set of generator words.
        var words = new long[(1 << generators.Count) - 1];
        for (var subset = 1; subset < 1 << generators.Count; subset++)
        {
            long word = 0;
            for (var g = 0; g < generators.Count; g++)
                if ((subset & (1 << g)) != 0) word ^= basic[g];
            words[subset - 1] = word;
        }
        return words;
    }
}

public static class FractionalFactorial
{
    public const int MaxFactors = 15;

    private const string Handbook = "NIST/SEMATECH e-Handbook of Statistical Methods, §5.3.3.4.7 (summary table of useful fractional factorial designs)";
    private const string Dataplot = "NIST Dataplot design index DEXRES4 (minimal resolution IV 2^(k−p) designs)";
    private const string Projection = "NIST e-Handbook §5.3.3.4.7, the 2^(15−11) design's first k columns";
    private const string Xu2009 = "Xu (2009), Technometrics 51:262–277, 256-run minimum-aberration designs (12-4.1, 13-5.1, 14-6.1, 15-7.1)";

    // (k, generators as the source prints them: generated factor = product of base factors).
    private static readonly (int K, string Generators, string Source)[] Published =
    [
        (3, "3=12", Handbook),
        (4, "4=123", Handbook),
        (5, "5=1234", Handbook),
        (5, "4=12 5=13", Handbook),
        (6, "6=12345", Handbook),
        (6, "5=123 6=234", Handbook),
        (6, "4=12 5=13 6=23", Handbook),
        (7, "7=123456", Handbook),
        (7, "6=1234 7=1245", Handbook),
        (7, "5=123 6=234 7=134", Handbook),
        (7, "4=12 5=13 6=23 7=123", Handbook),
        (8, "8=1234567", Handbook),
        (8, "7=1234 8=1256", Handbook),
        (8, "6=123 7=124 8=2345", Handbook),
        (8, "5=234 6=134 7=123 8=124", Handbook),
        (9, "8=13467 9=23567", Handbook),
        (9, "7=1234 8=1356 9=3456", Handbook),
        (9, "6=2345 7=1345 8=1245 9=1235", Handbook),
        (9, "5=123 6=234 7=134 8=124 9=1234", Handbook),
        (10, "8=1237 9=2345 10=1346", Handbook),
        (10, "7=2346 8=1346 9=1245 10=1235", Handbook),
        (10, "6=1234 7=1235 8=1245 9=1345 10=2345", Handbook),
        (10, "5=123 6=234 7=134 8=124 9=1234 10=12", Handbook),
        (11, "8=1237 9=2345 10=1346 11=1234567", Handbook),
        (11, "7=345 8=1234 9=126 10=2456 11=1456", Handbook),
        (11, "6=123 7=234 8=345 9=134 10=145 11=245", Handbook),
        (11, "5=123 6=234 7=134 8=124 9=1234 10=12 11=13", Handbook),
        (12, "9=1234567 10=12348 11=12568 12=13578", Xu2009),
        (12, "6=123 7=124 8=125 9=134 10=135 11=145 12=234", Dataplot),
        (12, "5=123 6=234 7=134 8=124 9=1234 10=12 11=13 12=14", Projection),
        (13, "9=1234567 10=12348 11=12568 12=13578 13=1467", Xu2009),
        (13, "6=123 7=124 8=125 9=134 10=135 11=145 12=234 13=235", Dataplot),
        (13, "5=123 6=234 7=134 8=124 9=1234 10=12 11=13 12=14 13=23", Projection),
        (14, "9=1234567 10=12348 11=12568 12=13578 13=1467 14=1245", Xu2009),
        (14, "6=123 7=124 8=125 9=134 10=135 11=145 12=234 13=235 14=245", Dataplot),
        (14, "5=123 6=234 7=134 8=124 9=1234 10=12 11=13 12=14 13=23 14=24", Projection),
        (15, "9=1234567 10=12348 11=12568 12=13578 13=1467 14=1245 15=2346", Xu2009),
        (15, "6=123 7=124 8=125 9=134 10=135 11=145 12=234 13=235 14=245 15=345", Dataplot),
        (15, "5=123 6=234 7=134 8=124 9=1234 10=12 11=13 12=14 13=23 14=24 15=34", Handbook),
    ];

    private static readonly Lazy<FractionPlan[]> Catalogue = new(() => [.. Published.Select(p => Parse(p.K, p.Generators, p.Source))]);

    /// <summary>The published fractions for k factors, largest first, then the full factorial.</summary>
    public static IReadOnlyList<FractionPlan> For(int factors) =>
        [.. Catalogue.Value.Where(p => p.Factors == factors).OrderBy(p => p.Fraction),
         new FractionPlan(factors, 0, [], "full factorial")];

    /// <summary>The smallest design (fewest runs) whose resolution is at least <paramref name="minimumResolution"/>;
    /// the full factorial when no published fraction reaches it.</summary>
    public static FractionPlan Smallest(int factors, int minimumResolution) =>
        For(factors).Where(p => (p.Resolution ?? int.MaxValue) >= minimumResolution).MinBy(p => p.Runs)!;

    /// <summary>The design for k factors in exactly <paramref name="runs"/> runs, if the catalogue has one.</summary>
    public static FractionPlan? WithRuns(int factors, int runs) => For(factors).FirstOrDefault(p => p.Runs == runs);

    /// <summary>The design in coded units: the base factors as a full factorial in standard order (first factor
    /// fastest), each generated factor the product of its base columns.</summary>
    public static Matrix<double> Generate(FractionPlan plan)
    {
        ArgumentNullException.ThrowIfNull(plan);
        var coded = Matrix<double>.Build.Dense(plan.Runs, plan.Factors);
        for (var i = 0; i < plan.Runs; i++)
        {
            for (var j = 0; j < plan.BaseFactors; j++) coded[i, j] = ((i >> j) & 1) == 0 ? -1 : 1;
            for (var g = 0; g < plan.Fraction; g++)
            {
                double product = 1;
                foreach (var f in plan.Generators[g]) product *= coded[i, f - 1];
                coded[i, plan.BaseFactors + g] = product;
            }
        }
        return coded;
    }

    /// <summary>Generators, defining relation and alias chains in the study's factor names.</summary>
    public static FractionSummary Summarize(FractionPlan plan, FactorSpace space)
    {
        ArgumentNullException.ThrowIfNull(plan);
        ArgumentNullException.ThrowIfNull(space);
        string Name(long mask) => string.Join("*", Enumerable.Range(0, plan.Factors).Where(j => (mask & (1L << j)) != 0).Select(j => space[j].Name));
        var generators = plan.Generators.Select((g, i) =>
            $"{space[plan.BaseFactors + i].Name} = {string.Join("*", g.Select(f => space[f - 1].Name))}").ToList();
        var relation = plan.Words.OrderBy(w => System.Numerics.BitOperations.PopCount((ulong)w)).ThenBy(w => w)
            .Select(w => "I = " + Name(w)).ToList();

        var effects = new List<long>();
        for (var a = 0; a < plan.Factors; a++) effects.Add(1L << a);
        for (var a = 0; a < plan.Factors; a++)
            for (var b = a + 1; b < plan.Factors; b++) effects.Add((1L << a) | (1L << b));
        var aliases = effects.Select(e => new AliasChain(Name(e),
                [.. plan.Words.Select(w => e ^ w).Where(x => System.Numerics.BitOperations.PopCount((ulong)x) <= 2)
                    .OrderBy(x => System.Numerics.BitOperations.PopCount((ulong)x)).ThenBy(x => x).Select(Name)]))
            .ToList();
        return new FractionSummary(plan.Factors, plan.Fraction, plan.Runs, plan.Resolution, generators, relation, aliases, plan.Source);
    }

    /// <summary>Roman numeral of a resolution ("III", "IV", "V" …).</summary>
    public static string Roman(int resolution) => resolution switch
    {
        1 => "I", 2 => "II", 3 => "III", 4 => "IV", 5 => "V", 6 => "VI", 7 => "VII", 8 => "VIII", 9 => "IX", 10 => "X",
        _ => resolution.ToString(CultureInfo.InvariantCulture),
    };

    private static FractionPlan Parse(int factors, string text, string source)
    {
        var generators = new List<int[]>();
        foreach (var part in text.Split(' ', StringSplitOptions.RemoveEmptyEntries))
        {
            var sides = part.Split('=');
            var generated = int.Parse(sides[0], CultureInfo.InvariantCulture);
            if (generated != factors - (text.Count(c => c == '=') - generators.Count) + 1)
                throw new InvalidOperationException($"Catalogue entry for {factors} factors lists factor {generated} out of order.");
            generators.Add([.. sides[1].Select(c => c - '0')]);
        }
        return new FractionPlan(factors, generators.Count, generators, source);
    }
}
