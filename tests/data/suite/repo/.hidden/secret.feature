Feature: hidden
  Scenario: hidden
    Given hidden
