Feature: Latin
  Scenario: café
    Given I order a café
