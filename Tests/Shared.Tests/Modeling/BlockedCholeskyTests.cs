using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling.LinearAlgebra;

namespace Runfold.Shared.Tests.Modeling;

/// <summary>The blocked, vectorised factorisation against MathNet.Numerics' own Cholesky and inverse.</summary>
public sealed class BlockedCholeskyTests
{
    [Theory]
    [InlineData(1)]
    [InlineData(7)]
    [InlineData(64)]
    [InlineData(131)]
    [InlineData(300)]
    public void Factor_solve_and_inverse_agree_with_MathNet(int n)
    {
        var random = new Random(n);
        var m = Matrix<double>.Build.Dense(n, n, (_, _) => random.NextDouble() - 0.5);
        var spd = m * m.Transpose() + Matrix<double>.Build.DenseIdentity(n);
        var a = new double[n * n];
        for (var i = 0; i < n; i++) for (var j = 0; j < n; j++) a[i * n + j] = spd[i, j];

        Assert.True(BlockedCholesky.TryFactor(a, n));
        var reference = spd.Cholesky();
        for (var i = 0; i < n; i++)
            for (var j = 0; j <= i; j++) Assert.Equal(reference.Factor[i, j], a[i * n + j], 10);
        Assert.Equal(reference.DeterminantLn, BlockedCholesky.LogDeterminant(a, n), 8);

        var b = Enumerable.Range(0, n).Select(i => Math.Sin(i)).ToArray();
        var expected = reference.Solve(Vector<double>.Build.DenseOfArray(b));
        BlockedCholesky.Solve(a, n, b);
        for (var i = 0; i < n; i++) Assert.Equal(expected[i], b[i], 9);

        var x = new double[n * n];
        var inverse = new double[n * n];
        BlockedCholesky.InvertLower(a, n, x);
        BlockedCholesky.InverseFromInverseFactor(x, n, inverse);
        var expectedInverse = spd.Inverse();
        for (var i = 0; i < n; i++)
            for (var j = 0; j < n; j++) Assert.Equal(expectedInverse[i, j], inverse[i * n + j], 8);
    }

    [Fact]
    public void A_matrix_that_is_not_positive_definite_is_refused()
    {
        double[] a = [1, 0, 2, 1];
        Assert.False(BlockedCholesky.TryFactor(a, 2));
    }
}
