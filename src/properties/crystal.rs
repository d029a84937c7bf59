//! Crystal data types shared by the model sets and the kinetics: how the
//! crystal–liquid interfacial energy is given, and the growth mechanism.

/// How the crystal–liquid interfacial energy is given.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Interface {
    /// Turnbull's reduced interfacial energy α: σ = α ΔH_m / (N_A^{1/3} V_m^{2/3}).
    TurnbullAlpha(f64),
    /// σ in J/m² directly.
    EnergyJPerM2(f64),
}

/// Interface-controlled growth mechanism (Jackson's criterion: ΔS_m/R < 2 normal, > 4 screw).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum GrowthMode {
    /// Continuous (normal) growth, f = 1.
    Normal,
    /// Screw-dislocation growth, f = (T_L − T)/(2π T_L).
    Screw,
}
