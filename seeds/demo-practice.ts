/**
 * The demo practice: a fictional scenario of our own. Every person, address and number
 * here is invented; e-mail addresses use the reserved .test domain.
 */
export const DEMO_PASSWORD = "demo-password";

export const DEMO_PRACTICE = {
  name: "Larkspur Lane Eye Care",
  addressLine1: "14 Larkspur Lane",
  addressLine2: "Upper Holloway",
  city: "Brackenford",
  postcode: "BF2 7QL",
  phone: "01632 960 418",
  email: "desk@dioptra-demo.test",
  timeZone: "Europe/London",
  currency: "GBP",
  spectacleRxValidityMonths: 24,
  contactLensRxValidityMonths: 12,
  acuityNotation: "metric" as const,
};

export const DEMO_PATIENT = {
  firstName: "Rosalind",
  lastName: "Achterberg",
  dateOfBirth: "1979-04-17",
  sex: "female" as const,
  email: "patient@dioptra-demo.test",
  phone: "07700 900 312",
  addressLine1: "3 Marrow Court",
  city: "Brackenford",
  postcode: "BF4 1DX",
  allergies: "None known",
  noKnownAllergies: true,
  medications: "Levothyroxine 50 µg daily",
  gpName: "Dr Ottilie Bramhall",
  gpPractice: "Brackenford Health Centre",
  gpAddress: "2 Weir Street, Brackenford BF1 2AA",
  gpPhone: "01632 960 100",
};

export const DEMO_USERS = [
  { email: "owner@dioptra-demo.test", name: "Imogen Castellane", role: "owner" as const, licenceNumber: "01-27743" },
  {
    email: "optometrist@dioptra-demo.test",
    name: "Tobias Wren",
    role: "optometrist" as const,
    licenceNumber: "01-31982",
  },
  { email: "reception@dioptra-demo.test", name: "Priya Oduya", role: "receptionist" as const, licenceNumber: null },
  { email: "patient@dioptra-demo.test", name: "Rosalind Achterberg", role: "patient" as const, licenceNumber: null },
];
