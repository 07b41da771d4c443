//! The crate's own shapes written once: access to a struct's fields by the variants of an enum.

/// `get`- and `get_mut`-style access to the fields of a struct by the variants of an enum, each
/// variant and its field named once. The getter gives a reference (`-> &T`) or a copy
/// (`-> T`); the second function gives mutable access:
///
/// ```text
/// fields_by! {
///     /// The value of one node.
///     fn get(&self) -> &T;
///     /// Mutable access to one node's value.
///     fn get_mut;
///     Node { Vb: vb, Ve: ve, ... }
/// }
/// ```
macro_rules! fields_by {
    (
        $(#[$get_doc:meta])* fn $get:ident(&self) -> &$t:ty;
        $(#[$mut_doc:meta])* fn $get_mut:ident;
        $key:ident { $($variant:ident: $field:ident),+ $(,)? }
    ) => {
        $(#[$get_doc])*
        pub fn $get(&self, which: $key) -> &$t {
            match which {
                $($key::$variant => &self.$field,)+
            }
        }
        fields_by!(@mut $(#[$mut_doc])* $get_mut, $t, $key { $($variant: $field),+ });
    };
    (
        $(#[$get_doc:meta])* fn $get:ident(&self) -> $t:ty;
        $(#[$mut_doc:meta])* fn $get_mut:ident;
        $key:ident { $($variant:ident: $field:ident),+ $(,)? }
    ) => {
        $(#[$get_doc])*
        pub fn $get(&self, which: $key) -> $t {
            match which {
                $($key::$variant => self.$field,)+
            }
        }
        fields_by!(@mut $(#[$mut_doc])* $get_mut, $t, $key { $($variant: $field),+ });
    };
    (@mut $(#[$mut_doc:meta])* $get_mut:ident, $t:ty, $key:ident { $($variant:ident: $field:ident),+ }) => {
        $(#[$mut_doc])*
        pub fn $get_mut(&mut self, which: $key) -> &mut $t {
            match which {
                $($key::$variant => &mut self.$field,)+
            }
        }
    };
}

/// `impl Default` for each type named as its `DEFAULT` constant (the one place its default
/// values are written).
macro_rules! default_is_const {
    ($($t:ident),+ $(,)?) => {
        $(
            impl Default for $t {
                #[doc = concat!("[`", stringify!($t), "::DEFAULT`].")]
                fn default() -> Self {
                    Self::DEFAULT
                }
            }
        )+
    };
}

/// `impl From<Inner> for Outer` for each error wrapped whole in a variant of `Outer`, so that
/// `?` lifts it: `error_from!(Outer { Inner => Variant })`.
macro_rules! error_from {
    ($outer:ident { $($inner:ident => $variant:ident),+ $(,)? }) => {
        $(
            impl From<$inner> for $outer {
                fn from(e: $inner) -> Self {
                    Self::$variant(e)
                }
            }
        )+
    };
}
