using Runfold.TestFunctions;

namespace Runfold.Shared.Tests.Studies;

/// <summary>The test functions themselves reproduce their published optima (VLSE, Surjanovic & Bingham).</summary>
public sealed class PublishedTestFunctionTests
{
    [Fact]
    public void Branin_has_its_published_minimum_at_its_three_minimisers()
    {
        foreach (var x in new[] { new[] { -Math.PI, 12.275 }, [Math.PI, 2.275], [9.42478, 2.475] })
            Assert.Equal(0.397887, PublishedTestFunctions.Branin.Evaluate(x), 5);
    }

    [Fact]
    public void Hartmann6_has_its_published_minimum()
    {
        var x = new[] { 0.20169, 0.150011, 0.476874, 0.275332, 0.311652, 0.6573 };
        Assert.Equal(-3.32237, PublishedTestFunctions.Hartmann6.Evaluate(x), 4);
    }

    [Fact]
    public void Ishigami_indices_have_their_published_values()
    {
        // The closed forms (Ishigami & Homma 1990) against the rounded values for a = 7, b = 0.1 as commonly
        // tabulated — from memory: S1 = 0.3139, S2 = 0.4424, S3 = 0; ST1 = 0.5576, ST2 = 0.4424, ST3 = 0.2437.
        var (first, total) = PublishedTestFunctions.IshigamiIndices();
        Assert.Equal([0.3139, 0.4424, 0.0], first.Select(v => Math.Round(v, 4)));
        Assert.Equal([0.5576, 0.4424, 0.2437], total.Select(v => Math.Round(v, 4)));
    }

    [Fact]
    public void Zdt_fronts_hold_where_the_tail_variables_are_zero()
    {
        var x = new double[30];
        x[0] = 0.36;
        Assert.Equal(ZdtProblems.Zdt1Front(0.36), ZdtProblems.Zdt1(x).F2, 12);
        Assert.Equal(ZdtProblems.Zdt2Front(0.36), ZdtProblems.Zdt2(x).F2, 12);
    }
}
