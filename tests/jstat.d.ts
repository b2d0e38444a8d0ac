// jstat (the outside statistics library the tests check the ranging core against) ships no
// type declarations; the tests cast what they use to its documented signatures.
declare module "jstat";
