Feature: Broken
  Scenario: one
    Given a step
    | a | b |
    | 1 |
