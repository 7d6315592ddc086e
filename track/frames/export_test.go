package frames

// ChooseGrey is chooseGrey, for the external tests.
var ChooseGrey = chooseGrey
