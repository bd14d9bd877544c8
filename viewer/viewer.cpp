// viewer/ — the interactive window comes in a later issue; the library exists now so
// that the dependency order imaging ← fit ← viewer ← app is fixed from the start.
namespace occulta::viewer {
int placeholder_anchor() { return 0; }
}  // namespace occulta::viewer
