using System.Globalization;
using ParameterExpression = System.Linq.Expressions.ParameterExpression;
using BinaryExpression = NCalc.BinaryExpression;
using UnaryExpression = NCalc.UnaryExpression;
using NCalc;
using NCalc.Visitors;
using Runfold.Shared.Studies;
using LinqExpression = System.Linq.Expressions.Expression;

namespace Runfold.Shared.Doe;

/// <summary>
/// Inequalities between factors in natural units, such as <c>fin_thickness * fin_count &lt;= 0.6 * base_width</c>.
/// NCalc parses each one; the tree is then compiled to a delegate over a natural-units row, so checking many
/// candidate runs costs little. Powers are written <c>x ** 2</c> or <c>Pow(x, 2)</c>.
/// </summary>
public sealed class DesignConstraints
{
    /// <summary>A run counts as feasible when it misses by no more than this share of the sides' size
    /// (rounding of integer factors and of coded values must not flip a run that sits on the boundary).</summary>
    private const double RelativeTolerance = 1e-9;

    private readonly Inequality[] _items;

    private DesignConstraints(Inequality[] items) => _items = items;

    public static DesignConstraints None { get; } = new([]);

    public int Count => _items.Length;

    public bool IsEmpty => _items.Length == 0;

    public IReadOnlyList<string> Texts => [.. _items.Select(c => c.Text)];

    /// <summary>Parses every constraint; problems are named by field (<c>design.constraints[1]</c>).</summary>
    public static Validated<DesignConstraints> Parse(IReadOnlyList<string>? texts, FactorSpace space, string field = "design.constraints")
    {
        ArgumentNullException.ThrowIfNull(space);
        if (texts is null || texts.Count == 0) return Validated<DesignConstraints>.Ok(None);
        var errors = new ValidationErrors();
        var items = new List<Inequality>();
        for (var i = 0; i < texts.Count; i++)
        {
            var at = $"{field}[{i}]";
            var text = texts[i]?.Trim();
            if (string.IsNullOrEmpty(text))
            {
                errors.Add(at, "A constraint cannot be empty; write an inequality such as \"fin_thickness * fin_count <= 0.6 * base_width\".");
                continue;
            }
            var parsed = Inequality.TryCreate(text, space, out var error);
            if (parsed is null) errors.Add(at, error!);
            else items.Add(parsed);
        }
        return errors.IsEmpty ? Validated<DesignConstraints>.Ok(new DesignConstraints([.. items])) : Validated<DesignConstraints>.Fail(errors);
    }

    public bool IsFeasible(ReadOnlySpan<double> natural)
    {
        var row = natural.ToArray();
        foreach (var item in _items)
            if (!item.Holds(row)) return false;
        return true;
    }

    /// <summary>How far a natural-units run misses the constraints, for searches that must walk back into the
    /// feasible region: the sum over broken inequalities of the miss relative to the sides' size
    /// (1 + |left| + |right|); 0 when every constraint holds, +∞ where a side is not a finite number.</summary>
    public double Violation(ReadOnlySpan<double> natural)
    {
        if (_items.Length == 0) return 0;
        var row = natural.ToArray();
        var total = 0.0;
        foreach (var item in _items) total += item.Miss(row);
        return total;
    }

    /// <summary>The texts of the constraints this natural-units run breaks.</summary>
    public IReadOnlyList<string> Violated(ReadOnlySpan<double> natural)
    {
        var row = natural.ToArray();
        return [.. _items.Where(c => !c.Holds(row)).Select(c => c.Text)];
    }

    /// <summary>Every run of the design that breaks a constraint, numbered from 1.</summary>
    public IReadOnlyList<ConstraintViolation> Violations(DesignMatrix design)
    {
        ArgumentNullException.ThrowIfNull(design);
        if (IsEmpty) return [];
        var list = new List<ConstraintViolation>();
        for (var i = 0; i < design.RunCount; i++)
        {
            var broken = Violated(design.NaturalRow(i));
            if (broken.Count > 0) list.Add(new ConstraintViolation(i + 1, broken));
        }
        return list;
    }

    private sealed class Inequality
    {
        private readonly Func<double[], double> _left;
        private readonly Func<double[], double> _right;
        private readonly bool _lessThan;

        private Inequality(string text, Func<double[], double> left, Func<double[], double> right, bool lessThan)
            => (Text, _left, _right, _lessThan) = (text, left, right, lessThan);

        public string Text { get; }

        public bool Holds(double[] natural) => Miss(natural) == 0;

        /// <summary>0 when the inequality holds (within the tolerance), else the miss over the sides' size.</summary>
        public double Miss(double[] natural)
        {
            var left = _left(natural);
            var right = _right(natural);
            if (!double.IsFinite(left) || !double.IsFinite(right)) return double.PositiveInfinity;
            var size = 1 + Math.Abs(left) + Math.Abs(right);
            var miss = _lessThan ? left - right : right - left;
            return miss <= RelativeTolerance * size ? 0 : miss / size;
        }

        public static Inequality? TryCreate(string text, FactorSpace space, out string? error)
        {
            error = null;
            if (text.Contains('^', StringComparison.Ordinal))
            {
                // NCalc reads '^' as bitwise exclusive or, with a precedence that would silently change the meaning.
                error = $"In the constraint \"{text}\": '^' is not a power here; write x ** 2 or Pow(x, 2).";
                return null;
            }
            LogicalExpression tree;
            try
            {
                var expression = new NCalc.Expression(text, CultureInfo.InvariantCulture);
                if (expression.HasErrors())
                {
                    error = $"The constraint \"{text}\" could not be read: {expression.Error?.Message} Write it like \"fin_thickness * fin_count <= 0.6 * base_width\".";
                    return null;
                }
                tree = expression.GetLogicalExpression()!;
            }
            catch (Exception e) when (e is not OutOfMemoryException)
            {
                error = $"The constraint \"{text}\" could not be read ({e.Message}). Write it like \"fin_thickness * fin_count <= 0.6 * base_width\".";
                return null;
            }

            if (tree is not BinaryExpression { Type: BinaryExpressionType.LesserOrEqual or BinaryExpressionType.Lesser
                    or BinaryExpressionType.GreaterOrEqual or BinaryExpressionType.Greater } comparison)
            {
                error = tree is BinaryExpression { Type: BinaryExpressionType.Equal or BinaryExpressionType.NotEqual }
                    ? $"The constraint \"{text}\" is an equation; a design needs room, so write inequalities with <=, >=, < or >."
                    : $"The constraint \"{text}\" needs one comparison: <=, >=, < or > between two expressions.";
                return null;
            }
            var row = LinqExpression.Parameter(typeof(double[]), "natural");
            var compiler = new Compiler(space, row);
            var left = comparison.LeftExpression.Accept(compiler);
            var right = comparison.RightExpression.Accept(compiler);
            if (compiler.Error is { } problem)
            {
                error = $"In the constraint \"{text}\": {problem}";
                return null;
            }
            if (compiler.UsedFactors.Count == 0)
            {
                error = $"The constraint \"{text}\" names no factor; it would hold everywhere or nowhere.";
                return null;
            }
            var lessThan = comparison.Type is BinaryExpressionType.LesserOrEqual or BinaryExpressionType.Lesser;
            return new Inequality(text,
                LinqExpression.Lambda<Func<double[], double>>(left, row).Compile(),
                LinqExpression.Lambda<Func<double[], double>>(right, row).Compile(),
                lessThan);
        }
    }

    /// <summary>NCalc's tree → a LINQ expression over the natural-units row; the first problem is kept as a sentence.</summary>
    private sealed class Compiler(FactorSpace space, ParameterExpression row) : ILogicalExpressionVisitor<LinqExpression>
    {
        private static readonly LinqExpression Zero = LinqExpression.Constant(0.0);

        public string? Error { get; private set; }

        public HashSet<string> UsedFactors { get; } = new(StringComparer.OrdinalIgnoreCase);

        private LinqExpression Fail(string message)
        {
            Error ??= message;
            return Zero;
        }

        public LinqExpression Visit(TernaryExpression expression) =>
            Fail("conditional (?:) expressions are not supported in constraints.");

        public LinqExpression Visit(BinaryExpression expression)
        {
            var left = expression.LeftExpression.Accept(this);
            var right = expression.RightExpression.Accept(this);
            return expression.Type switch
            {
                BinaryExpressionType.Plus => LinqExpression.Add(left, right),
                BinaryExpressionType.Minus => LinqExpression.Subtract(left, right),
                BinaryExpressionType.Times => LinqExpression.Multiply(left, right),
                BinaryExpressionType.Div => LinqExpression.Divide(left, right),
                BinaryExpressionType.Modulo => LinqExpression.Modulo(left, right),
                BinaryExpressionType.Exponentiation => LinqExpression.Power(left, right),
                BinaryExpressionType.LesserOrEqual or BinaryExpressionType.Lesser or BinaryExpressionType.GreaterOrEqual
                    or BinaryExpressionType.Greater or BinaryExpressionType.Equal or BinaryExpressionType.NotEqual =>
                    Fail("use exactly one comparison per constraint; split a chain like a <= b <= c into two constraints."),
                _ => Fail($"the operator '{expression.Type}' is not supported; use + - * / ** and functions such as Sqrt, Abs, Min, Max."),
            };
        }

        public LinqExpression Visit(UnaryExpression expression)
        {
            var inner = expression.Expression.Accept(this);
            return expression.Type switch
            {
                UnaryExpressionType.Negate => LinqExpression.Negate(inner),
                UnaryExpressionType.Positive => inner,
                _ => Fail($"the operator '{expression.Type}' is not supported in constraints."),
            };
        }

        public LinqExpression Visit(ValueExpression expression) => expression.Value switch
        {
            int i => LinqExpression.Constant((double)i),
            long l => LinqExpression.Constant((double)l),
            double d => LinqExpression.Constant(d),
            decimal m => LinqExpression.Constant((double)m),
            float f => LinqExpression.Constant((double)f),
            _ => Fail($"'{expression.Value}' is not a number."),
        };

        public LinqExpression Visit(Identifier expression)
        {
            var index = space.IndexOf(expression.Name);
            if (index < 0)
                return Fail($"'{expression.Name}' is not a factor of this study; the factors are {string.Join(", ", space.Factors.Select(f => f.Name))}.");
            if (space[index].IsCategorical)
                return Fail($"'{space[index].Name}' is categorical; constraints compare numeric factors only.");
            UsedFactors.Add(space[index].Name);
            return LinqExpression.ArrayIndex(row, LinqExpression.Constant(index));
        }

        public LinqExpression Visit(Function function)
        {
            var arguments = function.Parameters.Select(p => p.Accept(this)).ToArray();
            var name = function.Identifier.Name.ToLowerInvariant();
            var (method, arity) = name switch
            {
                "abs" => (nameof(Math.Abs), 1),
                "sqrt" => (nameof(Math.Sqrt), 1),
                "exp" => (nameof(Math.Exp), 1),
                "ln" => (nameof(Math.Log), 1),
                "log10" => (nameof(Math.Log10), 1),
                "sin" => (nameof(Math.Sin), 1),
                "cos" => (nameof(Math.Cos), 1),
                "tan" => (nameof(Math.Tan), 1),
                "pow" => (nameof(Math.Pow), 2),
                "min" => (nameof(Math.Min), 2),
                "max" => (nameof(Math.Max), 2),
                _ => ("", 0),
            };
            if (arity == 0)
                return Fail($"the function '{function.Identifier.Name}' is not available; use Abs, Sqrt, Exp, Ln, Log10, Sin, Cos, Tan, Pow, Min or Max.");
            if (arguments.Length != arity)
                return Fail($"{function.Identifier.Name} takes {arity} argument{(arity == 1 ? "" : "s")}.");
            var info = typeof(Math).GetMethod(method, [.. Enumerable.Repeat(typeof(double), arity)])!;
            return LinqExpression.Call(info, arguments);
        }

        public LinqExpression Visit(LogicalExpressionList list) => Fail("lists are not supported in constraints.");
    }
}
