// Package ui holds bellcheck's page as go-app components: the model editor,
// the parameter panel, the results table, the plots, the gallery and the
// page that ties them together, with its compact embed view, its share and
// export tools, and the JavaScript API on window (APIAnalyse, APITimeGrid).
// The calculator's state lives in Session, a plain value tested natively;
// the components only show it and report what the user did.
package ui
