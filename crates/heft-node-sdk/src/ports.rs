//! Ports declared once: [`node_ports!`](crate::node_ports) writes, from one declaration, the
//! port specs for `NodeSpec::inputs` or `NodeSpec::outputs` and a struct with one typed field
//! per port that `evaluate` fills from its [`Io`](crate::Io), so a misspelt port name does not
//! compile instead of failing at run time.
//!
//! ```
//! use heft_node_sdk::{Dimension, node_ports};
//!
//! node_ports! {
//!     /// What a spring follower is given.
//!     pub inputs SpringInputs {
//!         /// The position the point follows.
//!         target: vec3(Dimension::Length),
//!         /// A wind field (optional).
//!         wind: points(Dimension::Velocity, optional),
//!     }
//! }
//! node_ports! {
//!     /// What it gives back.
//!     pub outputs SpringOutputs {
//!         /// The point.
//!         position: vec3(Dimension::Length),
//!         /// Its energy.
//!         energy: scalar(Dimension::Energy),
//!     }
//! }
//!
//! assert_eq!(SpringInputs::specs()[1].name, "wind");
//! assert!(SpringInputs::specs()[1].optional);
//! assert_eq!(SpringOutputs::specs().len(), 2);
//! // In `evaluate`: let inputs = SpringInputs::read(io)?; inputs.target is a Series;
//! // let out = SpringOutputs::take(io)?; out.position and out.energy are &mut [f64].
//! ```
//!
//! A port name that is not declared is a compile error, not a run-time one:
//!
//! ```compile_fail
//! use heft_node_sdk::{Dimension, Io, NodeError, node_ports};
//!
//! node_ports! {
//!     /// Outputs.
//!     pub outputs Out {
//!         /// The point.
//!         position: vec3(Dimension::Length),
//!     }
//! }
//! fn write(io: &mut Io<'_>) -> Result<(), NodeError> {
//!     let out = Out::take(io)?;
//!     out.postion[0] = 1.0; // misspelt: no field `postion`
//!     Ok(())
//! }
//! ```
//!
//! Kinds: `scalar`, `vec3`, `transform`, `flag`, `points`, each with its dimension and, for an
//! input, `optional` after it (an unconnected optional input reads as an empty series). Input
//! fields are [`Series`](crate::Series); output fields are the output's frame-major buffer.

/// Declares a node's input or output ports once; see the [module docs](crate::ports).
#[macro_export]
macro_rules! node_ports {
    (
        $(#[$meta:meta])*
        $vis:vis inputs $name:ident {
            $( $(#[doc = $doc:literal])* $field:ident : $kind:ident ( $dim:expr $(, $opt:ident)? ) ),* $(,)?
        }
    ) => {
        $(#[$meta])*
        #[derive(Debug, Clone, Copy)]
        $vis struct $name<'a> {
            $( $(#[doc = $doc])* pub $field: $crate::Series<'a>, )*
        }

        impl<'a> $name<'a> {
            /// The ports' specs, in declaration order, for `NodeSpec::inputs`.
            pub fn specs() -> ::std::vec::Vec<$crate::PortSpec> {
                ::std::vec![
                    $( $crate::__port_optional!(
                        $crate::PortSpec::new(
                            stringify!($field),
                            $crate::__port_kind!($kind),
                            $dim,
                            concat!($($doc),*).trim(),
                        )
                        $(, $opt)?
                    ) ),*
                ]
            }

            /// Every input of an evaluation, by name.
            pub fn read(io: &$crate::Io<'a>) -> ::std::result::Result<Self, $crate::NodeError> {
                ::std::result::Result::Ok(Self {
                    $( $field: io.input(stringify!($field))?, )*
                })
            }
        }
    };
    (
        $(#[$meta:meta])*
        $vis:vis outputs $name:ident {
            $( $(#[doc = $doc:literal])* $field:ident : $kind:ident ( $dim:expr ) ),* $(,)?
        }
    ) => {
        $(#[$meta])*
        #[derive(Debug)]
        $vis struct $name<'b> {
            $( $(#[doc = $doc])* pub $field: &'b mut [f64], )*
        }

        impl<'b> $name<'b> {
            /// The ports' specs, in declaration order, for `NodeSpec::outputs`.
            pub fn specs() -> ::std::vec::Vec<$crate::PortSpec> {
                ::std::vec![
                    $( $crate::PortSpec::new(
                        stringify!($field),
                        $crate::__port_kind!($kind),
                        $dim,
                        concat!($($doc),*).trim(),
                    ) ),*
                ]
            }

            /// Every output buffer of an evaluation at once.
            pub fn take(io: &'b mut $crate::Io<'_>) -> ::std::result::Result<Self, $crate::NodeError> {
                let [$( ($field, _) ),*] = io.outputs([$( stringify!($field) ),*])?;
                ::std::result::Result::Ok(Self { $( $field, )* })
            }
        }
    };
}

#[doc(hidden)]
#[macro_export]
macro_rules! __port_kind {
    (scalar) => {
        $crate::PortKind::Scalar
    };
    (vec3) => {
        $crate::PortKind::Vec3
    };
    (transform) => {
        $crate::PortKind::Transform
    };
    (flag) => {
        $crate::PortKind::Flag
    };
    (points) => {
        $crate::PortKind::Points
    };
}

#[doc(hidden)]
#[macro_export]
macro_rules! __port_optional {
    ($spec:expr) => {
        $spec
    };
    ($spec:expr, optional) => {
        $spec.optional()
    };
}

#[cfg(test)]
mod tests {
    use crate::{Dimension, Io, NodeSpec, PortKind, Series, Timeline};

    crate::node_ports! {
        /// A test's inputs, one of every kind.
        inputs Given {
            /// A number.
            level: scalar(Dimension::Length),
            /// Where.
            place: vec3(Dimension::Length),
            /// A pose.
            pose: transform(Dimension::Length, optional),
            /// On or off.
            touching: flag(Dimension::Dimensionless),
            /// Some points.
            cloud: points(Dimension::Length, optional),
        }
    }

    crate::node_ports! {
        /// A test's outputs.
        outputs Made {
            /// Doubled.
            twice: scalar(Dimension::Length),
            /// Moved.
            moved: vec3(Dimension::Length),
        }
    }

    #[test]
    fn specs_keep_order_kind_dimension_doc_and_optional() {
        let s = Given::specs();
        let names: Vec<&str> = s.iter().map(|p| p.name.as_str()).collect();
        assert_eq!(names, ["level", "place", "pose", "touching", "cloud"]);
        let kinds: Vec<PortKind> = s.iter().map(|p| p.kind).collect();
        assert_eq!(
            kinds,
            [
                PortKind::Scalar,
                PortKind::Vec3,
                PortKind::Transform,
                PortKind::Flag,
                PortKind::Points
            ]
        );
        let optional: Vec<bool> = s.iter().map(|p| p.optional).collect();
        assert_eq!(optional, [false, false, true, false, true]);
        assert_eq!(s[0].doc, "A number.");
        assert_eq!(s[3].dimension, Dimension::Dimensionless);
        assert_eq!(Made::specs()[1].name, "moved");
    }

    #[test]
    fn read_and_take_reach_the_ports_by_name() {
        let spec = NodeSpec {
            name: "t".into(),
            inputs: Given::specs(),
            outputs: Made::specs(),
            ..NodeSpec::default()
        };
        let tl = Timeline {
            start_frame: 0,
            frame_count: 2,
            rate_num: 24,
            rate_den: 1,
        };
        let level = [1.0, 2.0];
        let place = [0.0, 0.0, 1.0, 0.0, 0.0, 2.0];
        let touching = [1.0, 0.0];
        let (mut twice, mut moved) = ([0.0; 2], [0.0; 6]);
        let mut io = Io::new(
            tl,
            &spec,
            vec![
                Series::new(&level, 1),
                Series::new(&place, 3),
                Series::new(&[], 7),
                Series::new(&touching, 1),
                Series::new(&[], 0),
            ],
            vec![&mut twice, &mut moved],
            vec![1, 3],
        );
        let given = Given::read(&io).expect("inputs");
        assert_eq!(given.place.vec3(1), [0.0, 0.0, 2.0]);
        assert!(given.pose.is_empty() && given.cloud.is_empty());
        assert_eq!(given.touching.frame(0), [1.0]);
        let out = Made::take(&mut io).expect("outputs");
        for i in 0..2 {
            out.twice[i] = 2.0 * given.level.frame(i)[0];
            out.moved[3 * i..3 * i + 3].copy_from_slice(&given.place.vec3(i));
        }
        assert_eq!(twice, [2.0, 4.0]);
        assert_eq!(moved[5], 2.0);
    }
}
