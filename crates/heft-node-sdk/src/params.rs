//! Parameters declared once: [`node_params!`](crate::node_params) writes a struct of typed
//! fields, the specs for `NodeSpec::params` and the reader that fills the struct, from one
//! declaration, so a misspelt parameter name does not compile instead of failing at run time.
//!
//! ```
//! use heft_node_sdk::{Dimension, node_params};
//!
//! node_params! {
//!     /// What a spring follower is given.
//!     pub struct SpringParams {
//!         /// Natural frequency of the spring.
//!         frequency: number(Dimension::Frequency, 2.0, (0.01, 100.0)),
//!         /// Steps per frame.
//!         substeps: integer(8, (1, 10_000)),
//!         /// How it starts.
//!         start: choice(["at_rest", "moving"]),
//!     }
//! }
//!
//! let specs = SpringParams::specs();
//! assert_eq!(specs[1].name, "substeps");
//! // In `evaluate`: let p = SpringParams::read(params)?; then p.frequency (f64), p.substeps (i64).
//! ```
//!
//! Kinds and their fields' types: `number(dimension, default, (min, max))` f64,
//! `integer(default, (min, max))` i64, `boolean(default)` bool, `choice([options])` String
//! (the first option is the default), `vec3(dimension, default, (min, max))` [f64; 3],
//! `text(default: Option<&str>)` String, `keys(dimension, min_keys)` Vec<(f64, [f64; 3])>.

/// Declares a node's parameters once; see the [module docs](crate::params).
#[macro_export]
macro_rules! node_params {
    (
        $(#[$meta:meta])*
        $vis:vis struct $name:ident {
            $( $(#[doc = $doc:literal])* $field:ident : $kind:ident ( $($arg:expr),* $(,)? ) ),* $(,)?
        }
    ) => {
        $(#[$meta])*
        #[derive(Debug, Clone, PartialEq)]
        $vis struct $name {
            $( $(#[doc = $doc])* pub $field: $crate::__param_type!($kind), )*
        }

        impl $name {
            /// The parameters' specs, in declaration order, for `NodeSpec::params`.
            pub fn specs() -> ::std::vec::Vec<$crate::ParamSpec> {
                ::std::vec![
                    $( $crate::__param_spec!($kind, stringify!($field), concat!($($doc),*).trim(), $($arg),*) ),*
                ]
            }

            /// Every parameter, read and typed.
            pub fn read(params: &$crate::Params) -> ::std::result::Result<Self, $crate::NodeError> {
                ::std::result::Result::Ok(Self {
                    $( $field: $crate::__param_read!($kind, params, stringify!($field)), )*
                })
            }
        }
    };
}

#[doc(hidden)]
#[macro_export]
macro_rules! __param_type {
    (number) => { f64 };
    (integer) => { i64 };
    (boolean) => { bool };
    (choice) => { ::std::string::String };
    (vec3) => { [f64; 3] };
    (text) => { ::std::string::String };
    (keys) => { ::std::vec::Vec<(f64, [f64; 3])> };
}

#[doc(hidden)]
#[macro_export]
macro_rules! __param_spec {
    (number, $n:expr, $doc:expr, $dim:expr, $default:expr, $range:expr) => {
        $crate::ParamSpec::number($n, $dim, $default, $range, $doc)
    };
    (integer, $n:expr, $doc:expr, $default:expr, $range:expr) => {
        $crate::ParamSpec::integer($n, $default, $range, $doc)
    };
    (boolean, $n:expr, $doc:expr, $default:expr) => {
        $crate::ParamSpec::boolean($n, $default, $doc)
    };
    (choice, $n:expr, $doc:expr, $options:expr) => {
        $crate::ParamSpec::choice($n, &$options, $doc)
    };
    (vec3, $n:expr, $doc:expr, $dim:expr, $default:expr, $range:expr) => {
        $crate::ParamSpec::vec3($n, $dim, $default, $range, $doc)
    };
    (text, $n:expr, $doc:expr, $default:expr) => {
        $crate::ParamSpec::text($n, $default, $doc)
    };
    (keys, $n:expr, $doc:expr, $dim:expr, $min_keys:expr) => {
        $crate::ParamSpec::keys($n, $dim, $min_keys, $doc)
    };
}

#[doc(hidden)]
#[macro_export]
macro_rules! __param_read {
    (number, $p:expr, $n:expr) => {
        $p.number($n)?
    };
    (integer, $p:expr, $n:expr) => {
        $p.integer($n)?
    };
    (boolean, $p:expr, $n:expr) => {
        $p.boolean($n)?
    };
    (choice, $p:expr, $n:expr) => {
        $p.choice($n)?.to_owned()
    };
    (vec3, $p:expr, $n:expr) => {
        $p.vec3($n)?
    };
    (text, $p:expr, $n:expr) => {
        $p.text($n)?.to_owned()
    };
    (keys, $p:expr, $n:expr) => {
        $p.keys($n)?.to_vec()
    };
}

#[cfg(test)]
mod tests {
    use crate::{Dimension, ParamType, ParamValue, Params};

    crate::node_params! {
        /// A test's parameters, one of every kind.
        struct Every {
            /// Slope of the ramp.
            slope: number(Dimension::Length, 1.0, (-10.0, 10.0)),
            /// How many.
            count: integer(3, (1, 9)),
            /// On or off.
            on: boolean(true),
            /// Where.
            placement: choice(["single", "ring"]),
            /// An offset.
            offset: vec3(Dimension::Length, [0.0, 0.0, 1.0], (-5.0, 5.0)),
            /// A file.
            file: text(Some("a.csv")),
            /// Keyframes.
            path: keys(Dimension::Length, 0),
        }
    }

    /// One declaration gives the specs in order, with names, docs and defaults, and a reader
    /// whose fields carry the values with their types.
    #[test]
    fn one_declaration_gives_specs_and_typed_values() {
        let specs = Every::specs();
        let names: Vec<&str> = specs.iter().map(|s| s.name.as_str()).collect();
        assert_eq!(names, ["slope", "count", "on", "placement", "offset", "file", "path"]);
        assert_eq!(specs[0].doc, "Slope of the ramp.");
        assert!(matches!(specs[1].ty, ParamType::Integer { min: 1, max: 9 }));
        let spec = crate::NodeSpec {
            name: "t".into(),
            doc: String::new(),
            notes: String::new(),
            inputs: vec![],
            outputs: vec![],
            params: specs,
            summaries: vec![],
        };
        // Every value as the host passes them: complete, in spec order, the defaults but two.
        let values = spec
            .params
            .iter()
            .map(|s| match s.name.as_str() {
                "count" => ParamValue::Integer(7),
                "path" => ParamValue::Keys(vec![(0.5, [1.0, 2.0, 3.0])]),
                _ => s.default.clone().expect("a default"),
            })
            .collect();
        let p = Params::new(&spec, values).expect("params");
        let e = Every::read(&p).expect("reads");
        assert_eq!(
            e,
            Every {
                slope: 1.0,
                count: 7,
                on: true,
                placement: "single".into(),
                offset: [0.0, 0.0, 1.0],
                file: "a.csv".into(),
                path: vec![(0.5, [1.0, 2.0, 3.0])],
            }
        );
    }
}
