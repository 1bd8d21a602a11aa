//! Small builders for plants, cases and schemes used by the reference tests (no YAML).
#![allow(dead_code)]

use nadir::model::*;

pub fn gen(
    id: &str,
    rating_mva: f64,
    inertia_s: f64,
    output_mw: f64,
    droop_pct: f64,
    pm: PrimeMover,
) -> Generator {
    Generator {
        id: id.into(),
        section: 0,
        rating_mva,
        inertia_s,
        output_mw,
        min_mw: 0.0,
        max_mw: 10.0 * rating_mva,
        governor: Governor {
            droop_pct,
            deadband_hz: 0.0,
            isochronous: false,
            prime_mover: pm,
            pressure_control: None,
        },
        trips: vec![],
        undervoltage_trips: vec![],
        off_frequency_limits: vec![],
    }
}

pub fn load(id: &str, p_mw: f64, freq_exp: f64) -> Load {
    Load {
        id: id.into(),
        description: String::new(),
        section: 0,
        p_mw,
        rank: 1,
        never_shed: false,
        freq_exp,
        inertia_s: 0.0,
        undervoltage: None,
    }
}

/// One section with a utility connection carrying `import_mw`.
pub fn plant(
    nominal_hz: f64,
    generators: Vec<Generator>,
    loads: Vec<Load>,
    import_mw: f64,
) -> Plant {
    let op = OperatingPoint {
        id: "normal".into(),
        description: String::new(),
        load_mw: loads.iter().map(|l| l.p_mw).collect(),
        online: generators.iter().map(|_| true).collect(),
        output_mw: generators.iter().map(|g| g.output_mw).collect(),
        import_mw,
        ties_open: vec![],
    };
    Plant {
        name: "test".into(),
        nominal_hz,
        sections: vec![Section { id: "bus".into() }],
        ties: vec![],
        utility: Some(Utility {
            breaker_id: "utility".into(),
            section: 0,
            import_mw,
            interface_trips: vec![],
        }),
        generators,
        loads,
        operating_points: vec![op],
        criteria: Criteria::defaults(nominal_hz),
        design: nadir::model::DesignLimits::defaults(nominal_hz, false),
    }
}

pub fn case(start: Start, duration_s: f64, events: Vec<(f64, Action)>) -> Case {
    Case {
        id: "c".into(),
        description: String::new(),
        start,
        applies_to: vec![0],
        duration_s,
        weight: 1.0,
        events: events
            .into_iter()
            .map(|(at_s, action)| CaseEvent { at_s, action })
            .collect(),
        utility_profile: vec![],
    }
}

pub fn scheme(stages: Vec<Stage>, frequency_lag_s: f64) -> Scheme {
    Scheme {
        groups: Vec::new(),
        name: "s".into(),
        measurement: Measurement {
            frequency_lag_s,
            rocof_window_s: 0.1,
        },
        stages,
        over_frequency: Vec::new(),
    }
}
