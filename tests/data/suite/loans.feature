Feature: Loans
  Scenario: Extend a loan
    Given the app is open
    And I log in
    When I open my notifications
    And I extend the loan
    Then I see the new return date

  Scenario Outline: Pay the deposit
    Given I log in
    When I pay the deposit by <method>
    Examples:
      | method  |
      | card    |
      | voucher |
