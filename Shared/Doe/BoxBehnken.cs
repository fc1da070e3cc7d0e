// Box–Behnken designs (Box & Behnken 1960, Technometrics 2, 455–475; NIST/SEMATECH e-Handbook §5.3.3.6.2):
// ±1 two-level factorials on the factor groups of a (partially) balanced incomplete block design, others at 0.
using MathNet.Numerics.LinearAlgebra;

namespace Runfold.Shared.Doe;

public static class BoxBehnken
{
    public const int MinFactors = 3;
    public const int MaxFactors = 7;

    /// <summary>The factor groups (1-based) of Box & Behnken (1960): all pairs for k = 3, 4, 5; for k = 6 the
    /// six triples of their partially balanced design; for k = 7 the seven triples of the balanced incomplete block
    /// design with λ = 1.</summary>
    public static IReadOnlyList<int[]> Blocks(int factors) => factors switch
    {
        >= 3 and <= 5 => [.. Pairs(factors)],
        6 => [[1, 2, 4], [2, 3, 5], [3, 4, 6], [1, 4, 5], [2, 5, 6], [1, 3, 6]],
        7 => [[4, 5, 6], [1, 6, 7], [2, 5, 7], [1, 2, 4], [3, 4, 7], [2, 3, 6], [1, 3, 5]],
        _ => throw new ArgumentOutOfRangeException(nameof(factors), factors, $"Box–Behnken designs here cover {MinFactors} to {MaxFactors} factors."),
    };

    /// <summary>Runs on the edges (no centre runs): each block contributes 2^(block size) runs.</summary>
    public static int EdgeRuns(int factors) => Blocks(factors).Sum(b => 1 << b.Length);

    /// <summary>Coded runs: the edge runs block by block (standard order inside a block), then centre runs.</summary>
    public static Matrix<double> Generate(int factors, int centerRuns)
    {
        var blocks = Blocks(factors);
        var coded = Matrix<double>.Build.Dense(EdgeRuns(factors) + centerRuns, factors);
        var row = 0;
        foreach (var block in blocks)
            for (var corner = 0; corner < 1 << block.Length; corner++, row++)
                for (var b = 0; b < block.Length; b++)
                    coded[row, block[b] - 1] = ((corner >> b) & 1) == 0 ? -1 : 1;
        return coded;
    }

    private static IEnumerable<int[]> Pairs(int factors)
    {
        for (var a = 1; a <= factors; a++)
            for (var b = a + 1; b <= factors; b++) yield return [a, b];
    }
}
