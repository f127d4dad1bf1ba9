Feature: Profile
  Scenario: Update the address
    Given I sign in as "ana"
    When I open my profile
    And I change the address to:
      """
      Toolshed Lane 4
      """
    And I fill in the form
      | field | value   |
      | city  | Lisbon  |
    Then the profile shows the new address

  Scenario: Reserve a drill
    Given I sign in as "ana"
    When I sign out
