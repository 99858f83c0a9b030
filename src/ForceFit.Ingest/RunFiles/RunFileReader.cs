using ForceFit.Core.Problems;
using ForceFit.Core.Units;

namespace ForceFit.Ingest.RunFiles;

/// <summary>
/// Reads a night folder (night.toml plus one &lt;run&gt;.toml per run) or a single run file into typed,
/// validated settings (run-files.md). A run's keys override night.toml's key by key within each table;
/// arrays and inline tables (such as [[theory]] and a column mapping) are replaced whole.
/// Every problem found is reported at once, each naming its file and line or key.
/// </summary>
public static class RunFileReader
{
    /// <summary>The shared settings file of a night folder.</summary>
    public const string NightFileName = "night.toml";

    private static readonly Dictionary<string, InstrumentMode> Modes = new()
    {
        ["frequency-shift"] = InstrumentMode.FrequencyShift,
        ["deflection"] = InstrumentMode.Deflection,
    };

    private static readonly Dictionary<string, Protocol> Protocols = new()
    {
        ["voltage-steps"] = Protocol.VoltageSteps,
        ["distance-ramps"] = Protocol.DistanceRamps,
    };

    private static readonly Dictionary<string, PiezoDirection> Directions = new()
    {
        ["away"] = PiezoDirection.Away,
        ["toward"] = PiezoDirection.Toward,
    };

    private static readonly Dictionary<string, MaterialModel> Models = new()
    {
        ["drude"] = MaterialModel.Drude,
        ["plasma"] = MaterialModel.Plasma,
        ["generalized-plasma"] = MaterialModel.GeneralizedPlasma,
        ["lorentz"] = MaterialModel.Lorentz,
        ["optical-data"] = MaterialModel.OpticalData,
    };

    private static readonly Dictionary<string, MaterialModel> Tails = new()
    {
        ["drude"] = MaterialModel.Drude,
        ["plasma"] = MaterialModel.Plasma,
    };

    private static readonly string[] RootRunKeys = ["data", "protocol", "settle", "bin_width", "columns"];
    private static readonly string[] RootTheoryKeys = ["title", "sphere", "surfaces", "materials", "theory"];
    private static readonly string[] RootOtherKeys = ["instrument", "piezo"];

    /// <summary>Reads a night folder, or one run file with the night.toml beside it (if any).</summary>
    /// <param name="path">A folder or a .toml file.</param>
    public static NightSettings ReadNight(string path)
    {
        (string folder, string? nightFile, List<string> runFiles) = Locate(path);
        var problems = new List<Problem>();
        TomlTableNode? night = nightFile is null ? null : Load(nightFile, problems);
        var runs = new List<RunSettings>();
        foreach (string runFile in runFiles)
        {
            TomlTableNode? run = Load(runFile, problems);
            if (run is null || (nightFile is not null && night is null)) continue;
            TomlTableNode merged = night is null ? run : Merge(night, run);
            RunSettings? settings = ReadRun(merged, runFile, nightFile, problems);
            if (settings is not null) runs.Add(settings);
        }
        if (problems.Count > 0) throw new InputException(problems);
        return new NightSettings(folder, runs);
    }

    /// <summary>
    /// Reads only what theory needs ([sphere], [surfaces], [materials.*], [[theory]]) from a .toml file,
    /// or from a night folder's night.toml. A temperature of 0 K is allowed here.
    /// </summary>
    public static TheoryInputs ReadTheoryInputs(string path)
    {
        string file = path;
        if (Directory.Exists(path))
        {
            file = Path.Combine(path, NightFileName);
            if (!File.Exists(file))
                throw new InputException(new Problem(path, null, $"no {NightFileName} in this folder; give the .toml file that holds [[theory]]"));
        }
        var problems = new List<Problem>();
        TomlTableNode? root = Load(file, problems);
        if (root is null) throw new InputException(problems);
        var reader = new TableReader(root, "the top level", file, problems);
        reader.Allow(RootRunKeys);
        reader.Allow(RootOtherKeys);
        TheoryInputs? inputs = ReadTheoryPart(reader, root, file, measuredNight: false, problems);
        reader.Finish();
        if (inputs is not null && inputs.Theories.Count == 0)
            problems.Add(new Problem(file, null, "no [[theory]] entry; add one with name, sphere and plate"));
        if (problems.Count > 0 || inputs is null) throw new InputException(problems);
        return inputs;
    }

    private static (string Folder, string? NightFile, List<string> RunFiles) Locate(string path)
    {
        if (Directory.Exists(path))
        {
            string night = Path.Combine(path, NightFileName);
            var runs = Directory.EnumerateFiles(path, "*.toml")
                .Where(f => !string.Equals(Path.GetFileName(f), NightFileName, StringComparison.Ordinal))
                .Order(StringComparer.Ordinal)
                .ToList();
            if (runs.Count == 0)
                throw new InputException(new Problem(path, null, $"no run files: the folder has no .toml file besides {NightFileName}"));
            return (path, File.Exists(night) ? night : null, runs);
        }
        if (File.Exists(path))
        {
            if (string.Equals(Path.GetFileName(path), NightFileName, StringComparison.Ordinal))
                throw new InputException(new Problem(path, null, $"{NightFileName} holds shared settings, not a run; give the night folder or a run's .toml"));
            string folder = Path.GetDirectoryName(path) is { Length: > 0 } d ? d : ".";
            string night = Path.Combine(folder, NightFileName);
            return (folder, File.Exists(night) ? night : null, [path]);
        }
        throw new InputException(new Problem(path, null, "no such file or folder"));
    }

    private static TomlTableNode? Load(string file, List<Problem> problems)
    {
        string text;
        try
        {
            text = File.ReadAllText(file);
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            problems.Add(new Problem(file, null, $"cannot read the file: {e.Message}"));
            return null;
        }
        if (text.Contains('\0'))
        {
            problems.Add(new Problem(file, null, "this is not a text file (it contains NUL bytes); a run file is TOML text"));
            return null;
        }
        try
        {
            return TomlTree.Parse(text, file);
        }
        catch (InputException e)
        {
            problems.AddRange(e.Problems);
            return null;
        }
    }

    /// <summary>Overlays <paramref name="run"/> on <paramref name="night"/>: tables merge key by key, other values are replaced.</summary>
    public static TomlTableNode Merge(TomlTableNode night, TomlTableNode run)
    {
        var entries = new Dictionary<string, TomlNode>(night.Entries, StringComparer.Ordinal);
        var order = night.Order.ToList();
        foreach (string key in run.Order)
        {
            TomlNode value = run.Entries[key];
            if (entries.TryGetValue(key, out TomlNode? under)
                && under is TomlTableNode { IsInline: false } underTable
                && value is TomlTableNode { IsInline: false } overTable)
                value = Merge(underTable, overTable);
            if (!entries.ContainsKey(key)) order.Add(key);
            entries[key] = value;
        }
        return new TomlTableNode(run.File, run.Line, run.IsInline, entries, order);
    }

    private static RunSettings? ReadRun(TomlTableNode root, string runFile, string? nightFile, List<Problem> problems)
    {
        int before = problems.Count;
        var top = new TableReader(root, "the top level", runFile, problems);
        TheoryInputs? theory = ReadTheoryPart(top, root, runFile, measuredNight: true, problems);

        TomlTableNode? instrumentTable = top.Table("instrument", required: true);
        InstrumentMode? peekedMode = instrumentTable?.Entries.GetValueOrDefault("mode") is TomlScalar { Value: string word }
            ? Modes.GetValueOrDefault(word) : null;
        TomlTableNode? columnsTable = top.Table("columns", required: true);
        ColumnsSettings? columns = columnsTable is null
            ? null
            : ReadColumns(new TableReader(columnsTable, "[columns]", runFile, problems), peekedMode);
        InstrumentSettings? instrument = instrumentTable is null
            ? null
            : ReadInstrument(new TableReader(instrumentTable, "[instrument]", runFile, problems), columns?.Deflection?.Unit);

        TomlTableNode piezoTable = top.Table("piezo", required: false) ?? TomlTableNode.Empty(runFile);
        PiezoSettings piezo = ReadPiezo(new TableReader(piezoTable, "[piezo]", runFile, problems));

        string? data = top.Text("data", required: true);
        string? dataPath = null;
        if (data is not null)
        {
            TomlNode node = top.Node("data")!;
            dataPath = Resolve(node.File, data);
            if (Directory.Exists(dataPath)) top.Error(node, $"data in the top level: '{dataPath}' is a folder, not a data file");
            else if (!File.Exists(dataPath)) top.Error(node, $"data in the top level: the data file '{dataPath}' does not exist");
        }
        Protocol? protocol = top.Choice("protocol", required: true, Protocols);
        Measurement? settle = top.Quantity("settle", Dimension.Time, required: protocol == Protocol.VoltageSteps, why: "needed by protocol 'voltage-steps'");
        top.Check("settle", settle, v => v >= 0, "zero or positive");
        Measurement? binWidth = top.Quantity("bin_width", Dimension.Length, required: protocol == Protocol.DistanceRamps, why: "needed by protocol 'distance-ramps'");
        top.Check("bin_width", binWidth, v => v > 0, "positive");

        top.Finish();

        if (problems.Count > before || theory is null || instrument is null || columns is null || dataPath is null || protocol is null)
            return null;
        string name = Path.GetFileNameWithoutExtension(runFile);
        return new RunSettings(name, runFile, nightFile, instrument, piezo, theory, dataPath, protocol.Value, settle, binWidth, columns);
    }

    private static TheoryInputs? ReadTheoryPart(TableReader top, TomlTableNode root, string file, bool measuredNight, List<Problem> problems)
    {
        int before = problems.Count;
        string title = top.Text("title", required: false) ?? "";

        TomlTableNode? sphereTable = top.Table("sphere", required: true);
        SphereSettings? sphere = null;
        if (sphereTable is not null)
        {
            var r = new TableReader(sphereTable, "[sphere]", file, problems);
            Measurement? radius = r.Quantity("radius", Dimension.Length, required: true);
            r.Check("radius", radius, v => v > 0, "positive");
            r.Finish();
            if (radius is { } rad) sphere = new SphereSettings(rad);
        }

        TomlTableNode? surfacesTable = top.Table("surfaces", required: true);
        SurfaceSettings? surfaces = surfacesTable is null ? null : ReadSurfaces(new TableReader(surfacesTable, "[surfaces]", file, problems), measuredNight);

        var materials = new Dictionary<string, MaterialSettings>(StringComparer.Ordinal);
        TomlTableNode? materialsTable = top.Table("materials", required: false);
        if (materialsTable is not null)
        {
            foreach (string name in materialsTable.Order)
            {
                TomlNode node = materialsTable.Entries[name];
                if (node is not TomlTableNode table)
                {
                    problems.Add(new Problem(node.File, node.Line, $"materials.{name} must be a table [materials.{name}], got {node.KindName}"));
                    continue;
                }
                MaterialSettings? material = ReadMaterial(name, new TableReader(table, $"[materials.{name}]", file, problems));
                if (material is not null) materials[name] = material;
            }
        }

        var theories = new List<TheorySettings>();
        TomlNode? theoryNode = top.Node("theory");
        if (theoryNode is TomlList list)
        {
            for (int i = 0; i < list.Items.Count; i++)
            {
                if (list.Items[i] is not TomlTableNode entry)
                {
                    problems.Add(new Problem(list.Items[i].File, list.Items[i].Line, "theory must be written as [[theory]] tables"));
                    continue;
                }
                TheorySettings? t = ReadTheoryEntry(new TableReader(entry, $"[[theory]] number {i + 1}", file, problems), materialsTable, theories);
                if (t is not null) theories.Add(t);
            }
        }
        else if (theoryNode is not null)
        {
            problems.Add(new Problem(theoryNode.File, theoryNode.Line, "theory must be written as [[theory]] tables, one per prediction"));
        }
        if (problems.Count > before || sphere is null || surfaces is null) return null;
        return new TheoryInputs(title, sphere, surfaces, materials, theories);
    }

    private static SurfaceSettings? ReadSurfaces(TableReader r, bool measuredNight)
    {
        Measurement? temperature = r.Quantity("temperature", Dimension.Temperature, required: true);
        if (measuredNight)
            r.Check("temperature", temperature, v => v > 0, "above 0 K for a measured night");
        else
            r.Check("temperature", temperature, v => v >= 0, "0 K or above");
        Roughness sphereRoughness = ReadRoughness(r, "sphere_roughness");
        Roughness plateRoughness = ReadRoughness(r, "plate_roughness");
        Measurement pfa = r.Quantity("pfa_correction", Dimension.Dimensionless, required: false) ?? Measurement.Exact(0, Dimension.Dimensionless);
        r.Finish();
        return temperature is { } t ? new SurfaceSettings(t, sphereRoughness, plateRoughness, pfa) : null;
    }

    private static Roughness ReadRoughness(TableReader r, string key)
    {
        TomlNode? node = r.Node(key);
        if (node is null) return Roughness.None;
        if (node is not TomlScalar { Value: string text })
        {
            r.Error(node, $"{key} in {r.Label}: expected an rms length such as \"1.1 nm\" or the path of a height-histogram CSV, got {node.KindName}");
            return Roughness.None;
        }
        if (text.Trim().EndsWith(".csv", StringComparison.OrdinalIgnoreCase))
        {
            string path = Resolve(node.File, text.Trim());
            if (!File.Exists(path)) r.Error(node, $"{key} in {r.Label}: the height-histogram file '{path}' does not exist");
            return new Roughness(null, path);
        }
        Measurement? rms = r.Quantity(key, Dimension.Length, required: false);
        r.Check(key, rms, v => v >= 0, "zero or positive");
        return rms is { } m ? new Roughness(m, null) : Roughness.None;
    }

    private static MaterialSettings? ReadMaterial(string name, TableReader r)
    {
        MaterialModel? model = r.Choice("model", required: true, Models);
        if (model is null)
        {
            r.Allow("plasma_frequency", "damping", "oscillators", "eps_inf", "table", "tail");
            r.Finish();
            return null;
        }
        bool needsPlasma = model is MaterialModel.Drude or MaterialModel.Plasma or MaterialModel.GeneralizedPlasma;
        string modelWord = Models.First(kv => kv.Value == model).Key;
        Measurement? wp = null, gamma = null;
        MaterialModel? tail = null;
        string? table = null;
        var oscillators = new List<OscillatorSettings>();
        Measurement epsInf = Measurement.Exact(1, Dimension.Dimensionless);

        if (model == MaterialModel.OpticalData)
        {
            string? tablePath = r.Text("table", required: true, why: "needed by model 'optical-data'");
            if (tablePath is not null)
            {
                TomlNode node = r.Node("table")!;
                table = Resolve(node.File, tablePath);
                if (!File.Exists(table)) r.Error(node, $"table in {r.Label}: the optical-data file '{table}' does not exist");
            }
            tail = r.Choice("tail", required: true, Tails, why: "the model below the table's first energy");
            wp = r.Quantity("plasma_frequency", Dimension.AngularFrequency, required: true, why: "needed by the tail");
            if (tail == MaterialModel.Drude)
                gamma = r.Quantity("damping", Dimension.AngularFrequency, required: true, why: "needed by tail 'drude'");
        }
        else
        {
            if (needsPlasma) wp = r.Quantity("plasma_frequency", Dimension.AngularFrequency, required: true, why: $"needed by model '{modelWord}'");
            if (model == MaterialModel.Drude) gamma = r.Quantity("damping", Dimension.AngularFrequency, required: true, why: "needed by model 'drude'");
            if (model is MaterialModel.GeneralizedPlasma or MaterialModel.Lorentz)
                oscillators = ReadOscillators(r, modelWord);
            if (model == MaterialModel.Lorentz)
            {
                epsInf = r.Quantity("eps_inf", Dimension.Dimensionless, required: false) ?? epsInf;
                r.Check("eps_inf", epsInf, v => v >= 1, "1 or more");
            }
        }
        r.Check("plasma_frequency", wp, v => v > 0, "positive");
        r.Check("damping", gamma, v => v >= 0, "zero or positive");
        foreach (string key in new[] { "plasma_frequency", "damping", "oscillators", "eps_inf", "table", "tail" })
        {
            if (r.Has(key) && r.Node(key) is { } extra && !Applies(model.Value, tail, key))
                r.Error(extra, $"{key} in {r.Label}: does not apply to model '{modelWord}'");
        }
        r.Finish();
        return new MaterialSettings(name, model.Value, wp, gamma, oscillators, epsInf, table, tail);
    }

    private static bool Applies(MaterialModel model, MaterialModel? tail, string key) => (model, key) switch
    {
        (MaterialModel.Drude, "plasma_frequency" or "damping") => true,
        (MaterialModel.Plasma, "plasma_frequency") => true,
        (MaterialModel.GeneralizedPlasma, "plasma_frequency" or "oscillators") => true,
        (MaterialModel.Lorentz, "oscillators" or "eps_inf") => true,
        (MaterialModel.OpticalData, "table" or "tail" or "plasma_frequency") => true,
        (MaterialModel.OpticalData, "damping") => tail != MaterialModel.Plasma,
        _ => false,
    };

    private static List<OscillatorSettings> ReadOscillators(TableReader r, string modelWord)
    {
        var result = new List<OscillatorSettings>();
        TomlNode? node = r.Node("oscillators");
        if (node is null)
        {
            r.Missing("oscillators", $"needed by model '{modelWord}'");
            return result;
        }
        if (node is not TomlList list)
        {
            r.Error(node, $"oscillators in {r.Label}: expected an array of {{ strength, frequency, damping }} tables, got {node.KindName}");
            return result;
        }
        for (int i = 0; i < list.Items.Count; i++)
        {
            if (list.Items[i] is not TomlTableNode item)
            {
                r.Error(list.Items[i], $"oscillators in {r.Label}: item {i + 1} must be a table {{ strength = ..., frequency = ..., damping = ... }}");
                continue;
            }
            var local = new List<Problem>();
            var o = new TableReader(item, $"oscillator {i + 1} of {r.Label}", item.File, local);
            Measurement? g = o.Quantity("strength", Dimension.AngularFrequencySquared, required: true);
            Measurement? w = o.Quantity("frequency", Dimension.AngularFrequency, required: true);
            Measurement? d = o.Quantity("damping", Dimension.AngularFrequency, required: true);
            o.Check("strength", g, v => v >= 0, "zero or positive");
            o.Check("frequency", w, v => v > 0, "positive");
            o.Check("damping", d, v => v >= 0, "zero or positive");
            o.Finish();
            foreach (Problem p in local) r.Error(item, p.Message);
            if (local.Count == 0 && g is { } gv && w is { } wv && d is { } dv) result.Add(new OscillatorSettings(gv, wv, dv));
        }
        return result;
    }

    private static TheorySettings? ReadTheoryEntry(TableReader r, TomlTableNode? materialsTable, List<TheorySettings> earlier)
    {
        string? name = r.Text("name", required: true);
        string? sphere = r.Text("sphere", required: true);
        string? plate = r.Text("plate", required: true);
        r.Finish();
        var defined = materialsTable?.Order ?? [];
        bool ok = true;
        foreach ((string role, string? material) in new[] { ("sphere", sphere), ("plate", plate) })
        {
            if (material is null || defined.Contains(material)) continue;
            ok = false;
            string near = Suggest.Nearest(material, defined) is { } n ? $"; did you mean '{n}'?" : "";
            string list = defined.Count == 0 ? "no [materials.*] table is defined" : "defined: " + string.Join(", ", defined);
            r.Error(r.Node(role)!, $"{role} in {r.Label}: material '{material}' is not defined ({list}){near}");
        }
        if (name is not null && earlier.Any(t => t.Name == name))
        {
            ok = false;
            r.Error(r.Node("name")!, $"name in {r.Label}: a theory named '{name}' is already defined");
        }
        return ok && name is not null && sphere is not null && plate is not null ? new TheorySettings(name, sphere, plate) : null;
    }

    private static InstrumentSettings? ReadInstrument(TableReader r, Unit? deflectionUnit)
    {
        InstrumentMode? mode = r.Choice("mode", required: true, Modes);
        bool frequency = mode == InstrumentMode.FrequencyShift;
        bool deflection = mode == InstrumentMode.Deflection;
        Measurement? k = r.Quantity("spring_constant", Dimension.SpringConstant, required: true, allowAuto: true, out _);
        r.Check("spring_constant", k, v => v > 0, "positive");
        Measurement? f0 = null;
        bool f0Auto = false;
        Measurement amplitude = Measurement.Exact(0, Dimension.Length);
        Measurement? m = null, sFree = null;
        bool sFreeAuto = false;
        if (frequency)
        {
            f0 = r.Quantity("free_frequency", Dimension.Frequency, required: true, allowAuto: true, out f0Auto);
            r.Check("free_frequency", f0, v => v > 0, "positive");
            amplitude = r.Quantity("amplitude", Dimension.Length, required: true, why: "the oscillation amplitude; \"0 nm\" for none") ?? amplitude;
            r.Check("amplitude", amplitude, v => v >= 0, "zero or positive");
        }
        else if (deflection)
        {
            // m and S_free take the signal's unit: m in length per volt for a voltage signal, a length for a unitless one.
            bool voltage = deflectionUnit?.Dimension != Dimension.Dimensionless;
            m = r.Quantity("deflection_sensitivity", voltage ? Dimension.LengthPerVoltage : Dimension.Length, required: true, allowAuto: true, out _);
            r.Check("deflection_sensitivity", m, v => v > 0, "positive");
            sFree = r.Quantity("deflection_free", voltage ? Dimension.Voltage : Dimension.Dimensionless, required: true, allowAuto: true, out sFreeAuto);
        }
        foreach ((string key, bool applies) in new[] { ("free_frequency", frequency), ("amplitude", frequency), ("deflection_sensitivity", deflection), ("deflection_free", deflection) })
            if (mode is not null && !applies && r.Has(key))
                r.Error(r.Node(key)!, $"{key} in [instrument]: does not apply to mode '{Modes.First(kv => kv.Value == mode).Key}'");
        if (mode is null) r.Allow("free_frequency", "amplitude", "deflection_sensitivity", "deflection_free");
        bool needsReference = f0Auto || sFreeAuto;
        Measurement? beyond = r.Quantity("reference_beyond", Dimension.Length, required: needsReference,
            why: frequency ? "free_frequency = \"auto\" takes f0 from reference steps" : "deflection_free = \"auto\" takes S_free from reference steps");
        r.Finish();
        return mode is null ? null : new InstrumentSettings(mode.Value, k, f0, beyond, amplitude, m, sFree);
    }

    private static PiezoSettings ReadPiezo(TableReader r)
    {
        Measurement scale = r.Quantity("scale", Dimension.Dimensionless, required: false) ?? Measurement.Exact(1, Dimension.Dimensionless);
        r.Check("scale", scale, v => v > 0, "positive");
        PiezoDirection direction = r.Choice("direction", required: false, Directions) ?? PiezoDirection.Away;
        r.Finish();
        return new PiezoSettings(scale, direction);
    }

    private static ColumnsSettings? ReadColumns(TableReader r, InstrumentMode? mode)
    {
        ColumnSettings? Column(string channel, bool required, Dimension[] dimensions, string? why = null)
        {
            TomlNode? node = r.Node(channel);
            if (node is null)
            {
                if (required) r.Missing(channel, why);
                return null;
            }
            if (node is not TomlTableNode table)
            {
                r.Error(node, $"{channel} in [columns]: expected {{ name = \"...\", unit = \"...\" }}, got {node.KindName}");
                return null;
            }
            var local = new List<Problem>();
            var c = new TableReader(table, $"columns.{channel}", table.File, local);
            string? name = c.Text("name", required: true);
            string? unitText = c.Text("unit", required: true);
            c.Finish();
            foreach (Problem p in local) r.Error(node, p.Message);
            if (name is null || unitText is null) return null;
            if (name.Trim().Length == 0)
            {
                r.Error(node, $"{channel} in [columns]: the column name is empty");
                return null;
            }
            string symbol = unitText.Trim() == "1" ? "" : unitText.Trim();
            Unit? unit = symbol.Length == 0 ? UnitTable.Dimensionless : UnitTable.Find(symbol);
            string allowed = string.Join(" or ", dimensions.Select(d => d.Describe()));
            if (unit is null)
            {
                r.Error(node, $"{channel} in [columns]: unknown unit '{unitText}'; {allowed} is expected");
                return null;
            }
            if (!dimensions.Contains(unit.Dimension))
            {
                r.Error(node, $"{channel} in [columns]: unit '{unitText}' is {unit.Dimension.Describe()}, but {allowed} is expected");
                return null;
            }
            return new ColumnSettings(name, unit);
        }

        ColumnSettings? time = Column("time", true, [Dimension.Time]);
        ColumnSettings? piezo = Column("piezo", true, [Dimension.Length]);
        ColumnSettings? bias = Column("bias", true, [Dimension.Voltage]);
        ColumnSettings? frequency = Column("frequency", mode == InstrumentMode.FrequencyShift, [Dimension.Frequency], "needed by mode 'frequency-shift'");
        ColumnSettings? deflection = Column("deflection", mode == InstrumentMode.Deflection, [Dimension.Voltage, Dimension.Dimensionless], "needed by mode 'deflection'");
        r.Finish();
        if (time is null || piezo is null || bias is null) return null;
        if (mode == InstrumentMode.FrequencyShift && frequency is null) return null;
        if (mode == InstrumentMode.Deflection && deflection is null) return null;
        return new ColumnsSettings(time, piezo, bias, frequency, deflection);
    }

    /// <summary>A path from a run file, relative to that file's folder.</summary>
    public static string Resolve(string fromFile, string path)
    {
        if (Path.IsPathRooted(path)) return path;
        string folder = Path.GetDirectoryName(fromFile) ?? "";
        return Path.Combine(folder, path);
    }
}
