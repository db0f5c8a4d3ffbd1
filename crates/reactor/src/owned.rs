//! [`OwnedIntegrator`]: a stepping session that owns its [`BatchSystem`], so that a unit of
//! a process model can hold both in one struct and move it to a worker thread.

use crate::integrator::{check_state, BatchIntegrator, BatchSystem};
use crate::{IntegrationError, ReactorError};

self_cell::self_cell!(
    /// The system and the session that borrows it, in one allocation-stable cell.
    struct SessionCell {
        owner: BatchSystem,
        #[not_covariant]
        dependent: BatchIntegrator,
    }
);

/// A stepping session that owns its system: [`BatchIntegrator`] without the borrow, and
/// `Send`, so a flowsheet can keep one per unit and step units on worker threads.
///
/// Everything a [`BatchIntegrator`] does is reached through [`with`](Self::with); the
/// common calls have shortcuts. Opening allocates as
/// [`BatchSystem::integrator`] does; stepping through it allocates nothing more.
///
/// ```
/// use stoik_kinetics::Kinetics;
/// use stoik_mechanism::parse_mechanism;
/// use stoik_reactor::{BatchSystem, IntegrationOptions, OwnedIntegrator};
///
/// let text = "stoik_mechanism = 1\n[units]\nactivation_energy = \"K\"\n\
///     [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
///     [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 0.5 }\n";
/// let kinetics = Kinetics::compile(&parse_mechanism(text, "a.toml").unwrap().mechanism).unwrap();
/// let system = BatchSystem::new(&kinetics, 300.0, &IntegrationOptions::new(2)).unwrap();
/// let mut unit = OwnedIntegrator::new(system, &[1.0, 0.0]).unwrap();
/// // Step it on another thread.
/// let handle = std::thread::spawn(move || {
///     let a = unit.with(|it| it.advance_to(2.0).map(|c| c[0])).unwrap();
///     (unit, a)
/// });
/// let (unit, a) = handle.join().unwrap();
/// assert!((a - (-1.0f64).exp()).abs() < 1e-5); // A = exp(-k t), k t = 1
/// assert_eq!(unit.time(), 2.0);
/// ```
pub struct OwnedIntegrator {
    cell: SessionCell,
}

// SAFETY: `BatchIntegrator` is not `Send` only because it holds shared references into its
// `BatchSystem` (the diffsol problem, whose equations keep per-evaluation caches in `Cell`
// and `RefCell` and so are not `Sync`). Here the system is owned by the same cell as the
// session, every reference the session holds points into it, and neither the session nor
// a reference to the system can leave the cell except for the duration of a `&self` or
// `&mut self` borrow of this value, which pins it to the borrowing thread. Moving the whole
// cell to another thread therefore moves the referents with the references; no two threads
// can reach the caches at once. The other parts (vectors, matrices, LU factors, the
// shared sparse analyses behind `Arc`) are `Send`, and so are the user terms a system may
// hold (`UserTerms: Send`). `OwnedIntegrator` is not `Sync`.
unsafe impl Send for OwnedIntegrator {}

impl OwnedIntegrator {
    /// Opens a session on `system` starting from `initial_mol_per_m3` (mol/m3, one per
    /// species) at t = 0 s, at the system's current temperature (see
    /// [`BatchSystem::integrator`]).
    pub fn new(
        mut system: BatchSystem,
        initial_mol_per_m3: &[f64],
    ) -> Result<OwnedIntegrator, ReactorError> {
        check_state(system.n_species(), initial_mol_per_m3, "initial state")?;
        if system.model().plug.is_some() {
            return Err(ReactorError::BadPlugFlow(
                "a plug flow runs whole (integrate_plug_flow), not in a stepping session".into(),
            ));
        }
        system.prepare(0.0, initial_mol_per_m3);
        let cell = SessionCell::try_new(system, |s| s.open_prepared())?;
        Ok(OwnedIntegrator { cell })
    }

    /// Runs `f` on the session (every [`BatchIntegrator`] method) and returns its result.
    pub fn with<R>(&mut self, f: impl FnOnce(&mut BatchIntegrator<'_>) -> R) -> R {
        self.cell.with_dependent_mut(|_, session| f(session))
    }

    /// The owned system (its model, temperature, linear algebra).
    pub fn system(&self) -> &BatchSystem {
        self.cell.borrow_owner()
    }

    /// Ends the session and gives the system back.
    pub fn into_system(self) -> BatchSystem {
        self.cell.into_owner()
    }

    /// Advances to `time_s` (s) and copies the concentrations there (mol/m3) into `out`
    /// (one per species); see [`BatchIntegrator::advance_to`].
    pub fn advance_to(&mut self, time_s: f64, out: &mut [f64]) -> Result<(), IntegrationError> {
        self.with(|it| {
            let c = it.advance_to(time_s)?;
            let n = c.len().min(out.len());
            out[..n].copy_from_slice(&c[..n]);
            Ok(())
        })
    }

    /// Current time (s).
    pub fn time(&self) -> f64 {
        self.cell.with_dependent(|_, session| session.time())
    }

    /// Copies the current concentrations (mol/m3) into `out` (one per species).
    pub fn state_into(&self, out: &mut [f64]) {
        self.cell.with_dependent(|_, session| {
            let c = session.state();
            let n = c.len().min(out.len());
            out[..n].copy_from_slice(&c[..n]);
        })
    }
}
