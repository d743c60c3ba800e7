//! UI-agnostic application state: screens, actions, update().
